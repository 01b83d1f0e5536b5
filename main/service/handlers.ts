// Runs in Node. What every call group of the service shares: the handler type of a group's calls, and the
// context the Service hands each group (the store, how sources are made, the open live bench, events).
// Types only, so the group files import this and never the Service itself.
import type { SupportLog } from './supportlog';
import type { z } from 'zod';
import type { CALLS, CallName, CallResults, EventPayloads, ParsedArgs, Status } from '../../app/api';
import type { LiveBench, LiveOptions } from '../live/live';
import type { PdfRenderer } from '../sheet/pdf';
import type { LevelSource, SourceEnv } from '../sources/types';
import type { Store } from '../store/store';

/** The handler of every call: parsed arguments in, the call's result out. */
export type Handlers = { [K in CallName]: (args: ParsedArgs<K>) => Promise<CallResults[K]> | CallResults[K] };

/** The handlers of one call group. */
export type GroupHandlers<K extends CallName> = Pick<Handlers, K>;

export interface ServiceContext {
  store: Store;
  mode: Status['mode'];
  unattendedStopS: number | null;
  liveOptions: LiveOptions;
  makeSource: (spec: string, env?: SourceEnv) => LevelSource;
  pdf: () => PdfRenderer;
  /** The open session's live bench, if a session is open. */
  live: () => LiveBench | null;
  emit: <E extends keyof EventPayloads>(event: E, payload: EventPayloads[E]) => void;
}

/** How a Service is made: the shells, the CLI and the tests pass these. */
export interface ServiceOptions {
  store: Store;
  mode: Status['mode'];
  live?: LiveOptions;
  /** Overrides how sources are made (tests inject fakes). */
  createSource?: (spec: string, env?: SourceEnv) => LevelSource;
  /** Prints a test sheet to PDF: headless Chromium by default; the desktop shell passes its own. */
  pdf?: PdfRenderer;
  /** Where start, stop, faults, notices and failed calls are recorded (default: the data folder's). */
  supportLog?: SupportLog;
  /** The unattended-stop rule the shell keeps (web mode), stated in the status; null elsewhere. */
  unattendedStopS?: number | null;
}

/** In-process typed call: throws the BenchError a failed call carries. */
export type Invoke = <K extends CallName>(
  name: K,
  args: z.input<(typeof CALLS)[K]>,
) => Promise<CallResults[K]>;
