// Runs in the Electron main process and in the sandboxed preload (so it imports nothing: a sandboxed
// preload may require only 'electron'). The IPC channel names and the events that cross them.

/** One channel for every call; the preload exposes one function per message, never a raw send. */
export const CALL_CHANNEL = 'nullbench:call';
/** One channel per event: EVENT_CHANNEL_PREFIX + event name. */
export const EVENT_CHANNEL_PREFIX = 'nullbench:event:';
/** The events a page may listen to (app/api EVENTS; a test holds the two lists equal). */
export const BRIDGE_EVENTS = ['reading', 'status', 'progress', 'notice', 'spectrum'] as const;
