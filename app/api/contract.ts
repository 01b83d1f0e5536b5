// Runs anywhere (app/ is runtime-free). The service contract: every call and every event,
// each with a zod schema for its argument. Shells parse arguments with these before any handler runs.
import { z } from 'zod';
import { RECORD_CALLS } from './records';
import { RECEIVER_CALLS } from './receivers';
import { PLAN_CALLS } from './plans';
import { NULL_CALLS } from './nullfit';
import { SESSION_CALLS } from './session';
import { SPECTRUM_CALLS } from './spectrum';

/** Argument schema of every call, by call group (one file of app/api each). The result types live in service.ts. */
export const CALLS = {
  ...SESSION_CALLS,
  ...RECEIVER_CALLS,
  ...PLAN_CALLS,
  ...RECORD_CALLS,
  ...NULL_CALLS,
  ...SPECTRUM_CALLS,
} as const;

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
