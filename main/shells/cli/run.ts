// Runs in Node. Entry point of the CLI bundle (bin/nullbench.js loads the build of this file).
import { main } from './index';

// When the reader of our output goes away (`nullbench read | head -1`), stop writing and end as the reader
// asked: a command that stores readings wraps up through its own signal handler (its session is ended,
// nothing stored is lost); one that only prints ends at once. No stack trace for a closed pipe.
let outClosed = false;
process.stdout.on('error', (e: NodeJS.ErrnoException) => {
  if (e.code !== 'EPIPE') throw e;
  if (outClosed) return;
  outClosed = true;
  for (const sig of ['SIGTERM', 'SIGINT'] as const)
    if (process.listenerCount(sig) > 0) {
      process.emit(sig, sig);
      return;
    }
  process.exit(0);
});

const io = {
  out: (s: string) => void (outClosed || process.stdout.write(s)),
  err: (s: string) => void process.stderr.write(s),
};

main(process.argv.slice(2), io).then(
  (code) => {
    process.exitCode = code;
  },
  (e: unknown) => {
    process.stderr.write(`error: ${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
    process.exitCode = 1;
  },
);
