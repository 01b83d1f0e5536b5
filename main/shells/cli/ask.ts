// Runs in Node. Questions the CLI asks the operator at the bench (set the generator, unbalance the modulator),
// answered with a line on standard input. Tests replace `prompter.ask` to answer in-process.
import { createInterface, type Interface } from 'node:readline';
import type { Io } from './command';

let rl: Interface | null = null;
const pending: string[] = [];
const waiting: ((line: string | null) => void)[] = [];
let ended = false;

function reader(): void {
  if (rl) return;
  rl = createInterface({ input: process.stdin, terminal: false });
  rl.on('line', (l) => {
    const w = waiting.shift();
    if (w) w(l);
    else pending.push(l);
  });
  rl.on('close', () => {
    ended = true;
    for (const w of waiting.splice(0)) w(null);
  });
}

export const prompter = {
  /** Prints the question on stderr and resolves with the answer line, or null when input has ended. */
  ask(io: Io, question: string): Promise<string | null> {
    io.err(`${question} `);
    reader();
    const l = pending.shift();
    if (l !== undefined) return Promise.resolve(l);
    if (ended) return Promise.resolve(null);
    return new Promise((ok) => waiting.push(ok));
  },
  /** Lets the process end once no more questions come. */
  done(): void {
    rl?.close();
    rl = null;
    ended = false;
    pending.length = 0;
  },
};
