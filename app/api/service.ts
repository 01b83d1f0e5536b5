// Runs anywhere (app/ is runtime-free). The typed shape of the service: what each call returns
// and which payload each event carries. main/service implements it; renderer/api consumes it.
import type { CallArgs, CallName, NoticeEvent, ProgressEvent } from './contract';
import type { RecordCallResults } from './records';
import type { ReceiverCallResults } from './rxcalls';
import type { NullCallResults } from './nullcalls';
import type { SpectrumCallResults, SpectrumFrame } from './spectrumcalls';
import type { Series } from '../decimate';
import type {
  Design,
  LiveReading,
  Reading,
  Revision,
  Session,
  SessionSummary,
  Status,
  Tree,
  Unit,
} from './schemas';

export interface SweepResult {
  readings: Reading[];
}

export interface CallResults
  extends ReceiverCallResults, RecordCallResults, NullCallResults, SpectrumCallResults {
  status: Status;
  tree: Tree;
  createDesign: Design;
  createRevision: Revision;
  createUnit: Unit;
  createSession: Session;
  listSessions: SessionSummary[];
  getSession: Session;
  openSession: Session;
  closeSession: null;
  tune: Status;
  setTrims: Status;
  keep: Reading;
  sweep: SweepResult;
  readings: Reading[];
  series: Series;
  loadDemo: { designId: string; units: number; sessions: number; keptReadings: number };
}

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
