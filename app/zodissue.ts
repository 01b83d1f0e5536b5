// Runs anywhere (app/ is runtime-free). Turns a zod failure into one BenchError that names the field.
import type { z } from 'zod';
import { BenchError } from './errors';

/** Dotted path with indices, e.g. root "path" + [1, "db"] -> "path[1].db"; empty root -> "bands[0].toHz". */
export function fieldPath(root: string, path: readonly PropertyKey[]): string {
  let out = root;
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else out += out === '' ? String(key) : `.${String(key)}`;
  }
  return out === '' ? '(input)' : out;
}

/** The first issue of a zod error as BenchError EINVAL; the message keeps zod's text or our custom one. */
export function benchErrorFromZod(error: z.ZodError, root = ''): BenchError {
  const issue = error.issues[0];
  if (!issue) return new BenchError('EINVAL', 'invalid input', root || '(input)');
  let message = issue.message;
  if (issue.code === 'unrecognized_keys') {
    const keys = issue.keys.map((k) => `"${k}"`).join(', ');
    message = `unknown key${issue.keys.length > 1 ? 's' : ''} ${keys} (check the spelling)`;
  }
  return new BenchError('EINVAL', message, fieldPath(root, issue.path));
}
