// Runs anywhere (app/ is runtime-free). The service contract: every call and every event,
// each with a zod schema for its argument. Shells parse arguments with these before any handler runs.
import { z } from 'zod';
import { RECORD_CALLS } from './records';
import { RECEIVER_CALLS } from './receivers';
import { PLAN_CALLS } from './plans';
import { NULL_CALLS } from './nullfit';
import { SESSION_CALLS } from './session';
import { SPECTRUM_CALLS } from './spectrum';

/** An argument schema that refuses unknown keys (a union: each of its objects does). */
function strictArgs<S extends z.ZodType>(schema: S): S {
  if (schema instanceof z.ZodObject) return schema.strict() as unknown as S;
  if (schema instanceof z.ZodUnion)
    return z.union(
      schema.options.map((o) => strictArgs(o as z.ZodType)) as [z.ZodType, z.ZodType],
    ) as unknown as S;
  return schema;
}

function strictCalls<T extends Record<string, z.ZodType>>(calls: T): T {
  return Object.fromEntries(Object.entries(calls).map(([k, s]) => [k, strictArgs(s)])) as T;
}

/**
 * Argument schema of every call, by call group (one file of app/api each); the result types live in
 * service.ts. Every call refuses an unknown argument, so a misspelt option is an error, not silently dropped.
 */
export const CALLS = strictCalls({
  ...SESSION_CALLS,
  ...RECEIVER_CALLS,
  ...PLAN_CALLS,
  ...RECORD_CALLS,
  ...NULL_CALLS,
  ...SPECTRUM_CALLS,
} as const);

export type CallName = keyof typeof CALLS;
export type CallArgs<K extends CallName> = z.input<(typeof CALLS)[K]>;
export type ParsedArgs<K extends CallName> = z.output<(typeof CALLS)[K]>;

export const EVENTS = ['reading', 'status', 'progress', 'notice', 'spectrum'] as const;
export type EventName = (typeof EVENTS)[number];

export interface ProgressEvent {
  task: string;
  done: number;
  total: number;
  message: string;
}
export interface NoticeEvent {
  level: 'info' | 'warn' | 'error';
  code?: string;
  message: string;
}

/** What a call returns on the wire: only the error's code, field and message cross a process boundary. */
export type CallResult<T> =
  { ok: true; value: T } | { ok: false; code: string; message: string; field?: string };

export function isCallName(name: string): name is CallName {
  return Object.prototype.hasOwnProperty.call(CALLS, name);
}
