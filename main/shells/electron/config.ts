// Runs in the Electron main process (imported by tests in Node too; no Electron import here).
// The window's security settings in one place, so a test can hold each of them.
import type { BrowserWindowConstructorOptions } from 'electron';
import { join } from 'node:path';

/** The window's size on first start, and the least it may be made. */
export const WINDOW_SIZE = { width: 1360, height: 900, minWidth: 960, minHeight: 640 };

/** The window's options; `bounds` is the kept size and place (winstate.ts), else the first-start size. */
export function windowOptions(
  preloadDir: string,
  bounds?: { x?: number; y?: number; width: number; height: number },
): BrowserWindowConstructorOptions {
  return {
    ...WINDOW_SIZE,
    ...bounds,
    title: 'Nullbench',
    backgroundColor: '#0e1d23',
    show: false,
    webPreferences: {
      preload: join(preloadDir, 'preload.cjs'),
      contextIsolation: true,
      sandbox: true,
      nodeIntegration: false,
      nodeIntegrationInWorker: false,
      webSecurity: true,
      allowRunningInsecureContent: false,
      webviewTag: false,
      spellcheck: false,
    },
  };
}

export { CALL_CHANNEL, EVENT_CHANNEL_PREFIX } from './channels';

/**
 * Only our own page, loaded from the app's files, may call the service. The #fragment is the page's own
 * view routing (renderer/views/nav.ts) and is ignored; anything else must match exactly.
 */
export function isTrustedSenderUrl(url: string | undefined, rendererIndexUrl: string): boolean {
  if (typeof url !== 'string') return false;
  const hash = url.indexOf('#');
  return (hash < 0 ? url : url.slice(0, hash)) === rendererIndexUrl;
}
