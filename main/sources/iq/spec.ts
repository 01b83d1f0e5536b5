// Runs in Node. How an IQ sample source is named: `iqsim` (our own SDR sample server fed by the simulated
// bench) or `iq:HOST:PORT` (an SDR sample server on the network). Only main/sources/ reads a spec string.
import { BenchError, check } from '../../../app/errors';

/** Parses `iqsim` or `iq:HOST:PORT`. */
export function parseIqSpec(spec: string): { sim: true } | { sim: false; host: string; port: number } {
  if (spec === 'iqsim') return { sim: true };
  const m = /^iq:([A-Za-z0-9.-]+|\[[0-9a-fA-F:]+\]):(\d{1,5})$/.exec(spec);
  if (!m) throw new BenchError('EINVAL', `"${spec}" is neither "iqsim" nor "iq:HOST:PORT"`, 'source');
  const port = Number(m[2]);
  check(port > 0 && port < 65536, 'source', `port must be 1..65535, got ${port}`);
  return { sim: false, host: m[1].replace(/^\[|\]$/g, ''), port };
}
