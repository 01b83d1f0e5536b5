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

/** Whether the source a spec names speaks through a command-set template (a serial receiver does). */
export function takesTemplate(spec: string): boolean {
  const d = SOURCES.find((s) => s.matches(spec.trim()));
  return d?.caps.template === true;
}

/** The template name a spec names with ",template=NAME", if any. */
export function templateNameInSpec(spec: string): string | null {
  const m = /,template=([^,]+)/.exec(spec);
  return m ? m[1] : null;
}

export { parseIqSpec } from './iq/spec';
export type { LevelSource, SourceDriver, SourceEnv } from './types';
