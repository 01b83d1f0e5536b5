// Test helpers: run a script under Debian's /usr/bin/python3 (numpy, scipy from Debian packages), the
// reference library for spectral checks. Not the python3 on PATH, which may lack them.
import { spawnSync } from 'node:child_process';

export const PYTHON = '/usr/bin/python3';

/**
 * Runs `script` with optional bytes on stdin and returns stdout; throws with stderr on failure.
 * The environment is passed on unchanged (OPENBLAS_CORETYPE and the like stay as they are).
 */
export function python(script: string, input?: Uint8Array, args: string[] = []): Buffer {
  const r = spawnSync(PYTHON, ['-c', script, ...args], { input, maxBuffer: 1 << 30, timeout: 120_000 });
  if (r.error) throw r.error;
  if (r.status !== 0) throw new Error(`python exited ${r.status}: ${r.stderr.toString()}`);
  return r.stdout;
}

/** Runs `script` and parses its stdout as JSON. */
export function pythonJson<T = unknown>(script: string, input?: Uint8Array, args: string[] = []): T {
  return JSON.parse(python(script, input, args).toString()) as T;
}

/** Bytes of a float32 array, for stdin. */
export function f32bytes(x: Float32Array): Uint8Array {
  return new Uint8Array(x.buffer, x.byteOffset, x.byteLength);
}

/** A float64 array from raw bytes (python's .astype('<f8').tobytes()). */
export function f64from(b: Buffer): Float64Array {
  const copy = new Uint8Array(b.length);
  copy.set(b);
  return new Float64Array(copy.buffer);
}
