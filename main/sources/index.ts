// Runs in Node. The one explicit registry of level sources: a plain list, one line per driver.
import { BenchError } from '../../app/errors';
import { rigNetDriver } from './rignet';
import { serialDriver } from './serial';
import { simDriver } from './sim';
import type { LevelSource, SourceDriver, SourceEnv } from './types';

export const SOURCES: SourceDriver[] = [simDriver, rigNetDriver, serialDriver];

export function findDriver(spec: string): SourceDriver {
  const d = SOURCES.find((s) => s.matches(spec.trim()));
  if (!d) {
    const known = SOURCES.map((s) => s.syntax).join(', ');
    throw new BenchError('EINVAL', `unknown source "${spec}"; known sources: ${known}`, 'source');
  }
  return d;
}

export function createSource(spec: string, env?: SourceEnv): LevelSource {
  return findDriver(spec).create(spec.trim(), env);
}

export type { LevelSource, SourceDriver, SourceEnv } from './types';
