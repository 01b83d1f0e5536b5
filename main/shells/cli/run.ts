// Runs in Node. Entry point of the CLI bundle (bin/nullbench.js loads the build of this file).
import { main } from './index';

const io = {
  out: (s: string) => void process.stdout.write(s),
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
