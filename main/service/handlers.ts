// Runs in Node. What every call group of the service shares: the handler type of a group's calls, and the
// context the Service hands each group (the store, how sources are made, the open live bench, events).
// Types only, so the group files import this and never the Service itself.
import type { CallName, CallResults, EventPayloads, ParsedArgs, Status } from '../../app/api';
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
  liveOptions: LiveOptions;
  makeSource: (spec: string, env?: SourceEnv) => LevelSource;
  pdf: () => PdfRenderer;
  /** The open session's live bench, if a session is open. */
  live: () => LiveBench | null;
  emit: <E extends keyof EventPayloads>(event: E, payload: EventPayloads[E]) => void;
}
