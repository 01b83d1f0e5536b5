// Runs anywhere (app/ is runtime-free). The typed shape of the service: what each call returns
// and which payload each event carries. main/service implements it; renderer/api consumes it.
import type { CallArgs, CallName, NoticeEvent, ProgressEvent } from './contract';
import type { RecordCallResults } from './records';
import type { ReceiverCallResults } from './receivers';
import type { PlanCallResults } from './plans';
import type { SessionCallResults } from './session';
import type { NullCallResults } from './nullfit';
import type { SpectrumCallResults, SpectrumFrame } from './spectrum';
import type { LiveReading, Status } from './schemas';

export interface CallResults
  extends
    SessionCallResults,
    ReceiverCallResults,
    PlanCallResults,
    RecordCallResults,
    NullCallResults,
    SpectrumCallResults {}

export interface EventPayloads {
  reading: LiveReading;
  status: Status;
  progress: ProgressEvent;
  notice: NoticeEvent;
  spectrum: SpectrumFrame;
}

/** Two verbs: call and listen. Both shells and the in-process service offer exactly this. */
export interface ServiceClient {
  call<K extends CallName>(name: K, args: CallArgs<K>): Promise<CallResults[K]>;
  listen<E extends keyof EventPayloads>(event: E, cb: (payload: EventPayloads[E]) => void): () => void;
}
