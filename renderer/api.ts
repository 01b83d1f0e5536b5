// Runs in the renderer (browser). The one API client: the preload bridge in the desktop app, HTTP calls and
// server-sent events in web mode. Views speak only to this.
import { errorText } from '../app/errors';
import type { CallArgs, CallName, CallResult, CallResults, EventPayloads, ServiceClient } from '../app/api';

export class ApiError extends Error {
  constructor(
    readonly code: string,
    message: string,
    readonly field?: string,
  ) {
    super(message);
  }
}

interface Bridge {
  call(name: string, args: unknown): Promise<CallResult<unknown>>;
  listen(event: string, cb: (payload: unknown) => void): () => void;
}

declare global {
  interface Window {
    nullbench?: Bridge;
  }
}

function unwrap<T>(r: CallResult<unknown>): T {
  // Shown to people as one line that says where and what; the field stays apart for the views to branch on.
  if (!r.ok) throw new ApiError(r.code, errorText(r), r.field);
  return r.value as T;
}

class HttpClient implements ServiceClient {
  private source: EventSource | null = null;
  private handlers = new Map<string, Set<(p: unknown) => void>>();

  async call<K extends CallName>(name: K, args: CallArgs<K>): Promise<CallResults[K]> {
    let res: Response;
    try {
      res = await fetch(`/api/call/${name}`, {
        method: 'POST',
        headers: { 'Content-Type': 'application/json' },
        body: JSON.stringify(args ?? {}),
      });
    } catch {
      throw new ApiError('EIO', 'the Nullbench server does not answer: is it still running?');
    }
    // A networked server with access control: this browser has not signed in (or its session ran out).
    if (res.status === 401) location.assign('/login');
    const body = (await res.json().catch(() => null)) as CallResult<unknown> | null;
    if (!body) throw new ApiError('EPROTO', `the server answered HTTP ${res.status} without a result`);
    return unwrap<CallResults[K]>(body);
  }

  listen<E extends keyof EventPayloads>(event: E, cb: (payload: EventPayloads[E]) => void): () => void {
    if (!this.source) this.source = new EventSource('/api/events');
    let set = this.handlers.get(event);
    if (!set) {
      set = new Set();
      this.handlers.set(event, set);
      const s = set;
      this.source.addEventListener(event, (m) => {
        const payload = JSON.parse((m as MessageEvent<string>).data) as unknown;
        s.forEach((h) => h(payload));
      });
    }
    const h = cb as (p: unknown) => void;
    set.add(h);
    return () => set.delete(h);
  }
}

class BridgeClient implements ServiceClient {
  constructor(private readonly bridge: Bridge) {}
  async call<K extends CallName>(name: K, args: CallArgs<K>): Promise<CallResults[K]> {
    return unwrap<CallResults[K]>(await this.bridge.call(name, args ?? {}));
  }
  listen<E extends keyof EventPayloads>(event: E, cb: (payload: EventPayloads[E]) => void): () => void {
    return this.bridge.listen(event, cb as (p: unknown) => void);
  }
}

export function connect(): ServiceClient {
  return window.nullbench ? new BridgeClient(window.nullbench) : new HttpClient();
}
