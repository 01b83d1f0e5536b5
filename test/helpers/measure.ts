// Test helpers: run `nullbench measure` in-process through its command record, capturing the output.
import { measureCommand } from '../../main/shells/cli/measure';

export async function runMeasure(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const code = await measureCommand.run(argv, { out: (s) => (out += s), err: (s) => (err += s) });
  return { code, out, err };
}
