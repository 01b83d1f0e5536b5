// Runs in Node. Opens an IQ recording by its name: WAV (two channels) or SigMF (.sigmf-meta or .sigmf-data).
import { BenchError } from '../../../app/errors';
import type { IqRecording } from './recording';
import { openSigmf } from './sigmf';
import { openWav } from './wav';

export async function openRecording(path: string): Promise<IqRecording> {
  const lower = path.toLowerCase();
  if (lower.endsWith('.sigmf-meta') || lower.endsWith('.sigmf-data')) return openSigmf(path);
  if (lower.endsWith('.wav') || lower.endsWith('.wave')) return openWav(path);
  if (lower.endsWith('.sigmf')) {
    throw new BenchError(
      'EINVAL',
      'SigMF archives (.sigmf) are not read; unpack it and pass the .sigmf-meta file',
      path,
    );
  }
  throw new BenchError(
    'EINVAL',
    'unknown recording type: pass a two-channel .wav file or a .sigmf-meta file',
    path,
  );
}
