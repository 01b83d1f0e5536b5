// Runs in the sandboxed preload of the desktop window (imports nothing but types and the channel names).
// What the page gets: exactly two functions, call and listen. Never a raw send or invoke; the IPC event
// object never reaches the page; listen returns its unsubscribe.
import type { IpcRendererEvent } from 'electron';
import { BRIDGE_EVENTS, CALL_CHANNEL, EVENT_CHANNEL_PREFIX } from './channels';

/** The part of ipcRenderer the bridge uses. */
export interface IpcRendererLike {
  invoke(channel: string, ...args: unknown[]): Promise<unknown>;
  on(channel: string, listener: (event: IpcRendererEvent, ...args: unknown[]) => void): void;
  removeListener(channel: string, listener: (event: IpcRendererEvent, ...args: unknown[]) => void): void;
}

export interface Bridge {
  call(name: string, args: unknown): Promise<unknown>;
  listen(event: string, cb: (payload: unknown) => void): () => void;
}

const KNOWN = new Set<string>(BRIDGE_EVENTS);

export function makeBridge(ipc: IpcRendererLike): Bridge {
  return Object.freeze({
    call: (name: string, args: unknown) => ipc.invoke(CALL_CHANNEL, String(name), args),
    listen: (event: string, cb: (payload: unknown) => void) => {
      if (!KNOWN.has(event)) throw new Error(`unknown event "${event}"`);
      if (typeof cb !== 'function') throw new Error('listen needs a callback function');
      const channel = EVENT_CHANNEL_PREFIX + event;
      const wrapped = (_e: IpcRendererEvent, payload: unknown) => cb(payload);
      ipc.on(channel, wrapped);
      return () => ipc.removeListener(channel, wrapped);
    },
  });
}
