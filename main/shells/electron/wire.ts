// Runs in the Electron main process. The desktop shell's wiring, written against the Electron API it is
// handed (main.ts passes the real one; tests pass a fake), so each protection can be held by a test:
// sandbox for every renderer, no navigation, no new windows, no webviews, no permissions, IPC only from our
// own page and only with arguments that pass the envelope schema here and the call's schema in the service.
import type { BrowserWindowConstructorOptions, Event, IpcMainInvokeEvent, WebContents } from 'electron';
import { join } from 'node:path';
import { z } from 'zod';
import { EVENTS } from '../../../app/api';
import { BenchError } from '../../../app/errors';
import { benchErrorFromZod } from '../../../app/zodissue';
import type { Service } from '../../service';
import { toFailure } from '../../../app/errors';
import { CALL_CHANNEL, EVENT_CHANNEL_PREFIX } from './channels';
import { isTrustedSenderUrl, WINDOW_SIZE, windowOptions } from './config';
import {
  placeWindow,
  readWindowState,
  STATE_FILE_NAME,
  stateSaver,
  type Rect,
  type Timers,
} from './winstate';

/** The parts of Electron the shell uses, structurally (the real module satisfies it; so does a fake). */
export interface ElectronApi {
  app: {
    enableSandbox(): void;
    whenReady(): Promise<void>;
    on(event: 'window-all-closed' | 'second-instance', listener: () => void): void;
    on(event: 'web-contents-created', listener: (event: Event, contents: WebContents) => void): void;
    quit(): void;
    requestSingleInstanceLock(): boolean;
    getPath(name: 'userData'): string;
  };
  screen: { getAllDisplays(): { workArea: Rect }[] };
  BrowserWindow: new (options?: BrowserWindowConstructorOptions) => WindowLike;
  ipcMain: {
    handle(
      channel: string,
      listener: (event: IpcMainInvokeEvent, ...args: unknown[]) => Promise<unknown> | unknown,
    ): void;
  };
  dialog: { showErrorBox(title: string, content: string): void };
  session: {
    defaultSession: {
      setPermissionRequestHandler(
        handler: (contents: WebContents, permission: string, callback: (granted: boolean) => void) => void,
      ): void;
      setPermissionCheckHandler(handler: (contents: WebContents | null, permission: string) => boolean): void;
    };
  };
}

export interface WindowLike {
  webContents: WebContents;
  loadFile(path: string): Promise<void>;
  once(event: 'ready-to-show', listener: () => void): unknown;
  on(event: 'resize' | 'move' | 'maximize' | 'unmaximize' | 'close', listener: () => void): unknown;
  show(): void;
  focus(): void;
  restore(): void;
  maximize(): void;
  isMinimized(): boolean;
  isMaximized(): boolean;
  isDestroyed(): boolean;
  getNormalBounds(): Rect;
}

export interface DesktopOptions {
  /** The renderer's index.html and its file: URL (the only page allowed to call the service). */
  indexFile: string;
  indexUrl: string;
  /** Folder of preload.cjs. */
  preloadDir: string;
  /** Opens the database and the service; null (after telling the user) when that is impossible. */
  open(): { service: Service; close(): void } | null;
  /** Where the window's size and place are kept (default: window-state.json in the user's data folder). */
  stateFile?: string;
  /** Timers of the state saver (tests pass their own). */
  timers?: Timers;
}

/** What crosses the call channel: a call name (letters only, as in app/api CALLS) and one argument. */
export const IpcCallSchema = z.tuple([
  z.string().regex(/^[A-Za-z]{1,40}$/, 'must be the name of a call (letters only)'),
  z.unknown(),
]);

/** Every renderer sandboxed; no web contents may navigate, redirect, open windows or attach webviews. */
export function hardenApp(e: ElectronApi): void {
  e.app.enableSandbox();
  e.app.on('web-contents-created', (_event, contents) => {
    contents.on('will-navigate', (ev) => ev.preventDefault());
    contents.on('will-redirect', (ev) => ev.preventDefault());
    contents.on('will-attach-webview', (ev) => ev.preventDefault());
    contents.setWindowOpenHandler(() => ({ action: 'deny' }));
  });
}

/** The page asks for nothing: camera, microphone, location, notifications, USB ... are all refused. */
export function denyPermissions(e: ElectronApi): void {
  e.session.defaultSession.setPermissionRequestHandler((_c, _p, callback) => callback(false));
  e.session.defaultSession.setPermissionCheckHandler(() => false);
}

/**
 * Registers the one call handler. A call is answered only when it comes from the main frame of our own
 * window showing our own page, and only after the envelope (name, argument) parses; Service.call then parses
 * the argument with the call's zod schema before any handler runs.
 */
export function registerCalls(
  e: ElectronApi,
  service: Pick<Service, 'call'>,
  indexUrl: string,
  trustedContents: () => WebContents | null,
): void {
  e.ipcMain.handle(CALL_CHANNEL, async (event, ...rest) => {
    const trusted = trustedContents();
    if (
      !trusted ||
      event.sender !== trusted ||
      !event.senderFrame ||
      event.senderFrame.parent !== null ||
      !isTrustedSenderUrl(event.senderFrame.url, indexUrl)
    ) {
      return toFailure(new BenchError('EREJECTED', 'call from an untrusted frame refused', 'sender'));
    }
    const parsed = IpcCallSchema.safeParse(rest);
    if (!parsed.success) return toFailure(benchErrorFromZod(parsed.error, 'ipc'));
    const [name, args] = parsed.data;
    return service.call(name, args);
  });
}

/**
 * Starts the desktop shell on the given Electron API. Resolves once the window is loading, or with null when
 * another instance already runs (it is brought to the front instead: two instances would share one database
 * and one serial port) or the database cannot be opened.
 */
export async function startDesktop(e: ElectronApi, opts: DesktopOptions): Promise<WindowLike | null> {
  hardenApp(e);
  if (!e.app.requestSingleInstanceLock()) {
    e.app.quit();
    return null;
  }
  let win: WindowLike | null = null;
  e.app.on('second-instance', () => {
    if (!win || win.isDestroyed()) return;
    if (win.isMinimized()) win.restore();
    win.show();
    win.focus();
  });
  await e.app.whenReady();
  denyPermissions(e);
  const opened = opts.open();
  if (!opened) {
    e.app.quit();
    return null;
  }
  const { service } = opened;
  registerCalls(e, service, opts.indexUrl, () => win?.webContents ?? null);
  const stateFile = opts.stateFile ?? join(e.app.getPath('userData'), STATE_FILE_NAME);
  const kept = readWindowState(stateFile);
  if (kept.problem) console.warn(`window size and place not restored: ${kept.problem}`);
  const placed = placeWindow(
    kept.state,
    e.screen.getAllDisplays().map((d) => d.workArea),
    WINDOW_SIZE,
  );
  win = new e.BrowserWindow(windowOptions(opts.preloadDir, kept.state ? placed.bounds : undefined));
  const contents = win.webContents;
  for (const ev of EVENTS) {
    service.listen(ev, (payload) => {
      if (!contents.isDestroyed()) contents.send(EVENT_CHANNEL_PREFIX + ev, payload);
    });
  }
  const shown = win;
  const saver = stateSaver(
    stateFile,
    () => (shown.isDestroyed() ? null : { ...shown.getNormalBounds(), maximized: shown.isMaximized() }),
    { timers: opts.timers, onError: (err) => console.warn(`window size and place not kept: ${err.message}`) },
  );
  for (const ev of ['resize', 'move', 'maximize', 'unmaximize'] as const) win.on(ev, () => saver.changed());
  win.on('close', () => saver.flush());
  win.once('ready-to-show', () => (placed.maximized ? shown.maximize() : shown.show()));
  void win.loadFile(opts.indexFile);
  e.app.on('window-all-closed', () => {
    void service.close().finally(() => {
      opened.close();
      e.app.quit();
    });
  });
  return win;
}
