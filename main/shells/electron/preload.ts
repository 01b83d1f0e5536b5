// Runs in the sandboxed preload of the desktop window. Exposes exactly two functions: call and listen,
// never a raw send; the IPC event object never reaches the page; listen returns its unsubscribe.
import { contextBridge, ipcRenderer, type IpcRendererEvent } from 'electron';

const CALL_CHANNEL = 'nullbench:call';
const EVENT_CHANNEL_PREFIX = 'nullbench:event:';
const EVENTS = new Set(['reading', 'status', 'progress', 'notice']);

contextBridge.exposeInMainWorld('nullbench', {
  call: (name: string, args: unknown) => ipcRenderer.invoke(CALL_CHANNEL, String(name), args),
  listen: (event: string, cb: (payload: unknown) => void) => {
    if (!EVENTS.has(event)) throw new Error(`unknown event "${event}"`);
    const channel = EVENT_CHANNEL_PREFIX + event;
    const wrapped = (_e: IpcRendererEvent, payload: unknown) => cb(payload);
    ipcRenderer.on(channel, wrapped);
    return () => ipcRenderer.removeListener(channel, wrapped);
  },
});
