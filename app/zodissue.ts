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

/**
 * The first issue of a zod error as BenchError EINVAL; the message keeps zod's text or our custom one. With
 * the schema that failed, an unknown key is named beside the nearest key the schema knows there.
 */
export function benchErrorFromZod(error: z.ZodError, root = '', schema?: z.ZodType): BenchError {
  const issue = error.issues[0];
  if (!issue) return new BenchError('EINVAL', 'invalid input', root || '(input)');
  let message = issue.message;
  if (issue.code === 'unrecognized_keys') {
    const known = schema ? keysAt(schema, issue.path) : [];
    const parts = issue.keys.map((k) => {
      const near = nearestKey(k, known);
      return near ? `"${k}" (did you mean "${near}"?)` : `"${k}"`;
    });
    const list = known.length ? `; known: ${known.join(', ')}` : ' (check the spelling)';
    message = `unknown key${issue.keys.length > 1 ? 's' : ''} ${parts.join(', ')}${list}`;
    // Checked against a call's schema, the unknown key is itself the field; elsewhere the object holding it.
    const at = schema ? [...issue.path, issue.keys[0]] : issue.path;
    return new BenchError('EINVAL', message, fieldPath(root, at));
  }
  return new BenchError('EINVAL', message, fieldPath(root, issue.path));
}

/** The zod definition behind a schema (zod 4 keeps it on `_zod.def`). */
interface ZodDefLike {
  type?: string;
  shape?: Record<string, z.ZodType>;
  innerType?: z.ZodType;
  element?: z.ZodType;
  options?: z.ZodType[];
  in?: z.ZodType;
}

function defOf(schema: z.ZodType): ZodDefLike {
  return (schema as unknown as { _zod: { def: ZodDefLike } })._zod.def;
}

/** The keys an object schema accepts at a path (through optional, default, nullable, arrays and pipes). */
export function keysAt(schema: z.ZodType, path: readonly PropertyKey[]): string[] {
  let cur: z.ZodType | undefined = schema;
  let i = 0;
  for (let guard = 0; cur && guard < 64; guard++) {
    const def = defOf(cur);
    if (def.innerType) cur = def.innerType;
    else if (def.in) cur = def.in;
    else if (def.type === 'object' && def.shape) {
      if (i === path.length) return Object.keys(def.shape);
      cur = def.shape[String(path[i++])];
    } else if (def.type === 'array' && def.element) {
      i++;
      cur = def.element;
    } else if (def.type === 'union' && def.options && i === path.length) {
      return [...new Set(def.options.flatMap((o) => keysAt(o, [])))];
    } else return [];
  }
  return [];
}

/** Levenshtein distance (Levenshtein 1966): single-character insertions, deletions and substitutions. */
export function editDistance(a: string, b: string): number {
  const row = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    let diag = row[0];
    row[0] = i;
    for (let j = 1; j <= b.length; j++) {
      const up = row[j];
      row[j] = Math.min(row[j] + 1, row[j - 1] + 1, diag + (a[i - 1] === b[j - 1] ? 0 : 1));
      diag = up;
    }
  }
  return row[b.length];
}

/** The known key nearest a misspelt one, if it is near enough to be a typo (a third of its length). */
export function nearestKey(key: string, known: readonly string[]): string | null {
  let best: string | null = null;
  let bestD = Infinity;
  for (const k of known) {
    const d = editDistance(key.toLowerCase(), k.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = k;
    }
  }
  return best !== null && bestD <= Math.max(2, Math.ceil(key.length / 3)) ? best : null;
}
