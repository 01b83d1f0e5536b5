// The desktop shell's protections, each held by a test of its configuration and wiring. Electron itself is
// not installed here: the wiring (wire.ts) runs against a fake Electron that records what the shell asks for.
import { describe, it, beforeEach, afterEach } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { build } from 'esbuild';
import type { IpcMainInvokeEvent, IpcRendererEvent, WebContents } from 'electron';
import { EVENTS } from '../../app/api';
import { Service } from '../../main/service';
import { Store } from '../../main/store/store';
import { makeBridge } from '../../main/shells/electron/bridge';
import { BRIDGE_EVENTS, CALL_CHANNEL, EVENT_CHANNEL_PREFIX } from '../../main/shells/electron/channels';
import { isTrustedSenderUrl, windowOptions } from '../../main/shells/electron/config';
import { startDesktop, type ElectronApi } from '../../main/shells/electron/wire';
import {
  GRAB,
  placeWindow,
  readWindowState,
  stateSaver,
  writeWindowState,
  type Rect,
  type Timers,
} from '../../main/shells/electron/winstate';
import { CSP } from '../../main/shells/web';
import { tempDb, tempDir } from '../helpers/tmp';

type Listener = (...args: unknown[]) => unknown;

/** What the tests reach of a fake window: its bounds and state, and a way to fire its events. */
interface FakeWindow {
  bounds: Rect;
  minimized: boolean;
  maximized: boolean;
  emit(event: string): void;
}

/** A WebContents that records its handlers, and an event object that records preventDefault(). */
class FakeContents {
  static next = 1;
  readonly id = FakeContents.next++;
  readonly handlers = new Map<string, Listener[]>();
  windowOpenHandler: ((d: { url: string }) => { action: string }) | null = null;
  sent: [string, unknown][] = [];
  on(event: string, l: Listener) {
    this.handlers.set(event, [...(this.handlers.get(event) ?? []), l]);
    return this;
  }
  setWindowOpenHandler(h: (d: { url: string }) => { action: string }) {
    this.windowOpenHandler = h;
  }
  send(channel: string, payload: unknown) {
    this.sent.push([channel, payload]);
  }
  isDestroyed() {
    return false;
  }
  /** Fires an event as Electron would; true when some handler prevented it. */
  fire(event: string, ...args: unknown[]): boolean {
    let prevented = false;
    const ev = { preventDefault: () => (prevented = true) };
    for (const l of this.handlers.get(event) ?? []) l(ev, ...args);
    return prevented;
  }
}

function fakeElectron(opts: { lock?: boolean; userData?: string; workAreas?: Rect[] } = {}) {
  const log: string[] = [];
  const appHandlers = new Map<string, Listener[]>();
  const calls = new Map<string, Listener>();
  const windows: { options: unknown; webContents: FakeContents; loaded: string | null; win: FakeWindow }[] =
    [];
  const perms: { request: Listener | null; check: Listener | null } = { request: null, check: null };
  let ready: () => void = () => undefined;
  const whenReady = new Promise<void>((r) => (ready = r));
  const api = {
    app: {
      enableSandbox: () => log.push('enableSandbox'),
      whenReady: () => {
        log.push('whenReady');
        return whenReady;
      },
      on: (event: string, l: Listener) => {
        log.push(`app.on ${event}`);
        appHandlers.set(event, [...(appHandlers.get(event) ?? []), l]);
      },
      quit: () => log.push('quit'),
      requestSingleInstanceLock: () => {
        log.push('requestSingleInstanceLock');
        return opts.lock ?? true;
      },
      getPath: (name: string) => {
        assert.equal(name, 'userData');
        return opts.userData ?? '/nonexistent/nullbench-user-data';
      },
    },
    screen: {
      getAllDisplays: () =>
        (opts.workAreas ?? [{ x: 0, y: 0, width: 1920, height: 1080 }]).map((workArea, id) => ({
          id,
          workArea,
        })),
    },
    BrowserWindow: class {
      readonly webContents = new FakeContents();
      loaded: string | null = null;
      readonly handlers = new Map<string, Listener[]>();
      bounds: Rect;
      minimized = false;
      maximized = false;
      constructor(options: { x?: number; y?: number; width: number; height: number }) {
        log.push('new BrowserWindow');
        this.bounds = {
          x: options.x ?? 100,
          y: options.y ?? 50,
          width: options.width,
          height: options.height,
        };
        // Electron emits web-contents-created for every new contents.
        for (const l of appHandlers.get('web-contents-created') ?? []) l({}, this.webContents);
        windows.push({ options, webContents: this.webContents, loaded: null, win: this });
      }
      async loadFile(path: string) {
        windows[windows.length - 1].loaded = path;
      }
      once(event: string, l: Listener) {
        return this.on(event, l);
      }
      on(event: string, l: Listener) {
        this.handlers.set(event, [...(this.handlers.get(event) ?? []), l]);
        return this;
      }
      emit(event: string) {
        for (const l of this.handlers.get(event) ?? []) l();
      }
      show() {
        log.push('show');
      }
      focus() {
        log.push('focus');
      }
      restore() {
        log.push('restore');
        this.minimized = false;
      }
      maximize() {
        log.push('maximize');
        this.maximized = true;
      }
      isMinimized() {
        return this.minimized;
      }
      isMaximized() {
        return this.maximized;
      }
      isDestroyed() {
        return false;
      }
      getNormalBounds() {
        return { ...this.bounds };
      }
    },
    ipcMain: {
      handle: (channel: string, l: Listener) => {
        log.push(`ipcMain.handle ${channel}`);
        calls.set(channel, l);
      },
    },
    dialog: { showErrorBox: () => log.push('showErrorBox') },
    session: {
      defaultSession: {
        setPermissionRequestHandler: (h: Listener) => (perms.request = h),
        setPermissionCheckHandler: (h: Listener) => (perms.check = h),
      },
    },
  };
  return { api: api as unknown as ElectronApi, log, appHandlers, calls, windows, perms, ready };
}

const INDEX = '/opt/nullbench/dist/renderer/index.html';
const INDEX_URL = pathToFileURL(INDEX).href;

describe('desktop shell: window configuration', () => {
  it('isolates the page: context isolation, sandbox, no Node, web security on, no webview tag', () => {
    const w = windowOptions('/opt/nullbench/dist/electron').webPreferences!;
    assert.equal(w.contextIsolation, true);
    assert.equal(w.sandbox, true);
    assert.equal(w.nodeIntegration, false);
    assert.equal(w.nodeIntegrationInWorker, false);
    assert.equal(w.webSecurity, true);
    assert.equal(w.allowRunningInsecureContent, false);
    assert.equal(w.webviewTag, false);
    assert.equal(w.preload, join('/opt/nullbench/dist/electron', 'preload.cjs'));
  });

  it('puts a Content Security Policy in the page: scripts and styles from the app only, no inline code, no eval', () => {
    const html = readFileSync('renderer/index.html', 'utf8');
    const meta = /<meta\s+http-equiv="Content-Security-Policy"\s+content="([^"]+)"/.exec(html);
    assert.ok(meta, 'index.html has no CSP meta tag');
    const policy = meta[1];
    assert.match(policy, /default-src 'self'/);
    assert.match(policy, /script-src 'self'(;|$)/);
    assert.match(policy, /object-src 'none'/);
    assert.match(policy, /base-uri 'none'/);
    assert.doesNotMatch(policy, /unsafe-inline|unsafe-eval|\*/);
    // The same policy as the web mode sends as a header (frame-ancestors only works as a header).
    assert.equal(policy, CSP.replace(" frame-ancestors 'none';", ''));
    assert.doesNotMatch(html, /<script(?![^>]*\bsrc=)[^>]*>/, 'an inline script');
    assert.doesNotMatch(html, /\son[a-z]+=/i, 'an inline event handler');
  });

  it('trusts only its own page as a sender (its #view routes included), nothing else', () => {
    assert.equal(isTrustedSenderUrl(INDEX_URL, INDEX_URL), true);
    assert.equal(isTrustedSenderUrl(`${INDEX_URL}#records`, INDEX_URL), true);
    for (const u of [
      undefined,
      '',
      'https://attacker.example/',
      `${INDEX_URL}?x=1`,
      pathToFileURL('/tmp/index.html').href,
      `${INDEX_URL}/../other.html`,
      INDEX_URL.replace('file://', 'http://'),
    ])
      assert.equal(isTrustedSenderUrl(u, INDEX_URL), false, String(u));
  });
});

describe('desktop shell: wiring', () => {
  let db: ReturnType<typeof tempDb>;
  let store: Store;
  let service: Service;
  let fake: ReturnType<typeof fakeElectron>;
  let win: FakeContents;

  beforeEach(async () => {
    db = tempDb();
    store = new Store(db.file);
    service = new Service({ store, mode: 'desktop' });
    fake = fakeElectron();
    const started = startDesktop(fake.api, {
      indexFile: INDEX,
      indexUrl: INDEX_URL,
      preloadDir: '/opt/nullbench/dist/electron',
      open: () => ({ service, close: () => undefined }),
    });
    fake.ready();
    await started;
    win = fake.windows[0].webContents;
  });

  afterEach(async () => {
    await service.close();
    store.close();
    db.cleanup();
  });

  it('enables the sandbox for every renderer before the app is ready, and opens one window on our page', () => {
    const sandbox = fake.log.indexOf('enableSandbox');
    assert.ok(sandbox >= 0 && sandbox < fake.log.indexOf('whenReady'), fake.log.join(', '));
    assert.equal(fake.windows.length, 1);
    assert.equal(fake.windows[0].loaded, INDEX);
    assert.deepEqual(fake.windows[0].options, windowOptions('/opt/nullbench/dist/electron'));
  });

  it('blocks navigation, redirects, new windows and webviews in every web contents', () => {
    for (const url of ['https://attacker.example/', pathToFileURL('/etc/passwd').href, INDEX_URL]) {
      assert.equal(win.fire('will-navigate', url), true, `navigation to ${url} went through`);
      assert.equal(win.fire('will-redirect', url), true, `redirect to ${url} went through`);
      assert.deepEqual(win.windowOpenHandler?.({ url }), { action: 'deny' });
    }
    assert.equal(win.fire('will-attach-webview'), true);
    // Web contents made later (a devtools or a stray frame) get the same treatment.
    const other = new FakeContents();
    for (const l of fake.appHandlers.get('web-contents-created') ?? []) l({}, other);
    assert.equal(other.fire('will-navigate', 'https://attacker.example/'), true);
    assert.deepEqual(other.windowOpenHandler?.({ url: 'https://attacker.example/' }), { action: 'deny' });
  });

  it('grants the page no permission (camera, microphone, location, notifications ...)', () => {
    for (const p of ['media', 'geolocation', 'notifications', 'clipboard-read', 'usb', 'serial']) {
      let granted: boolean | null = null;
      fake.perms.request!(win, p, (g: boolean) => (granted = g));
      assert.equal(granted, false, p);
      assert.equal(fake.perms.check!(win, p), false, p);
    }
  });

  const invoke = (
    sender: unknown,
    frame: { url: string; parent: unknown } | null,
    ...args: unknown[]
  ): Promise<{ ok: boolean; code?: string; field?: string; value?: unknown }> =>
    Promise.resolve(
      fake.calls.get(CALL_CHANNEL)!(
        { sender, senderFrame: frame } as unknown as IpcMainInvokeEvent,
        ...args,
      ) as { ok: boolean },
    );

  it('answers calls from its own page, validated by the contract', async () => {
    const top = { url: INDEX_URL, parent: null };
    const ok = await invoke(win, top, 'createDesign', { name: 'Kestrel 20' });
    assert.equal(ok.ok, true);
    const routed = await invoke(win, { url: `${INDEX_URL}#records`, parent: null }, 'tree', {});
    assert.equal(routed.ok, true);
  });

  it('refuses calls from another page, a subframe, or another window, and runs nothing', async () => {
    const refused = [
      await invoke(win, { url: 'https://attacker.example/', parent: null }, 'createDesign', { name: 'X' }),
      await invoke(win, { url: INDEX_URL, parent: { url: INDEX_URL } }, 'createDesign', { name: 'X' }),
      await invoke(new FakeContents(), { url: INDEX_URL, parent: null }, 'createDesign', { name: 'X' }),
      await invoke(win, null, 'createDesign', { name: 'X' }),
    ];
    for (const r of refused) assert.deepEqual([r.ok, r.code, r.field], [false, 'EREJECTED', 'sender']);
    assert.equal(store.tree().length, 0);
  });

  it('refuses a malformed envelope or malformed arguments with EINVAL naming the field, before any handler', async () => {
    const top = { url: INDEX_URL, parent: null };
    const cases: [unknown[], string][] = [
      [[42, {}], 'ipc[0]'],
      [['createDesign'], 'ipc'],
      [['create Design', {}], 'ipc[0]'],
      [['__proto__', {}], 'ipc[0]'],
      [['createDesign', {}, 'extra'], 'ipc'],
      [['createDesign', { name: '' }], 'name'],
      // The contract is strict: an unknown argument is refused by name, not dropped.
      [['createDesign', { name: 'Y', surprise: 1 }], 'surprise'],
    ];
    for (const [args, field] of cases) {
      const r = await invoke(win, top, ...args);
      assert.deepEqual([r.ok, r.code, r.field], [false, 'EINVAL', field], JSON.stringify(args));
    }
    assert.deepEqual(
      store.tree().map((d) => d.name),
      [],
      'no call ran',
    );
  });

  it('forwards every service event to its own window only', async () => {
    await service.call('status', {});
    await invoke(win, { url: INDEX_URL, parent: null }, 'closeSession', {});
    assert.ok(win.sent.some(([c]) => c === `${EVENT_CHANNEL_PREFIX}status`));
    assert.deepEqual([...EVENTS], [...BRIDGE_EVENTS], 'the preload and the contract list different events');
  });
});

describe('desktop shell: preload bridge', () => {
  function fakeIpc() {
    const listeners = new Map<string, Set<(e: IpcRendererEvent, ...a: unknown[]) => void>>();
    const invoked: unknown[][] = [];
    return {
      invoked,
      listeners,
      invoke: async (...a: unknown[]) => invoked.push(a),
      on: (c: string, l: (e: IpcRendererEvent, ...a: unknown[]) => void) => {
        if (!listeners.has(c)) listeners.set(c, new Set());
        listeners.get(c)!.add(l);
      },
      removeListener: (c: string, l: (e: IpcRendererEvent, ...a: unknown[]) => void) =>
        listeners.get(c)?.delete(l),
    };
  }

  it('exposes exactly call and listen, frozen; call goes through the one call channel', async () => {
    const ipc = fakeIpc();
    const bridge = makeBridge(ipc);
    assert.deepEqual(Object.keys(bridge).sort(), ['call', 'listen']);
    assert.ok(Object.isFrozen(bridge));
    await bridge.call({ toString: () => 'status' } as unknown as string, { a: 1 });
    assert.deepEqual(ipc.invoked, [[CALL_CHANNEL, 'status', { a: 1 }]]);
  });

  it('passes the payload and never the IPC event to the page; unsubscribing removes the listener', () => {
    const ipc = fakeIpc();
    const bridge = makeBridge(ipc);
    const got: unknown[][] = [];
    const off = bridge.listen('reading', (...a: unknown[]) => got.push(a));
    const channel = `${EVENT_CHANNEL_PREFIX}reading`;
    const sender = { send: () => undefined } as unknown as WebContents;
    for (const l of ipc.listeners.get(channel)!) l({ sender } as unknown as IpcRendererEvent, { dbm: -80 });
    assert.deepEqual(got, [[{ dbm: -80 }]]);
    off();
    assert.equal(ipc.listeners.get(channel)!.size, 0);
  });

  it('refuses unknown events and a missing callback', () => {
    const bridge = makeBridge(fakeIpc());
    assert.throws(() => bridge.listen('nullbench:call', () => undefined), /unknown event/);
    assert.throws(() => bridge.listen('reading', null as unknown as () => void), /callback/);
  });

  it('builds into a preload that requires nothing but electron (all a sandboxed preload may load)', async () => {
    const out = await build({
      entryPoints: ['main/shells/electron/preload.ts'],
      bundle: true,
      write: false,
      platform: 'node',
      format: 'cjs',
      external: ['electron'],
      logLevel: 'silent',
    });
    const code = out.outputFiles[0].text;
    const required = [...code.matchAll(/require\(["']([^"']+)["']\)/g)].map((m) => m[1]);
    assert.deepEqual([...new Set(required)], ['electron']);
  });
});

/** A clock the test drives: timers fire only on tick(). */
function manualTimers(): Timers & { tick(ms: number): void; pending(): number } {
  let now = 0;
  let next = 1;
  const due = new Map<number, { at: number; fn: () => void }>();
  return {
    set: (fn, ms) => {
      due.set(next, { at: now + ms, fn });
      return next++;
    },
    clear: (h) => due.delete(h as number),
    tick(ms) {
      now += ms;
      for (const [h, t] of [...due].sort((a, b) => a[1].at - b[1].at))
        if (t.at <= now) {
          due.delete(h);
          t.fn();
        }
    },
    pending: () => due.size,
  };
}

const DEFAULTS = { width: 1360, height: 900, minWidth: 960, minHeight: 640 };

describe('desktop shell: window size and place', () => {
  const full = { x: 0, y: 0, width: 1920, height: 1080 };
  const left = { x: -1280, y: 0, width: 1280, height: 984 }; // a second display left of the first, with a panel

  it('keeps a saved window that is still on a display as it was, maximised state included', () => {
    const s = { x: 200, y: 120, width: 1400, height: 860, maximized: true };
    assert.deepEqual(placeWindow(s, [full], DEFAULTS), {
      bounds: { x: 200, y: 120, width: 1400, height: 860 },
      maximized: true,
    });
    const onLeft = { x: -1200, y: 40, width: 1000, height: 700, maximized: false };
    assert.deepEqual(placeWindow(onLeft, [full, left], DEFAULTS).bounds, {
      x: -1200,
      y: 40,
      width: 1000,
      height: 700,
    });
  });

  it('moves a window whose display is gone (or whose title bar is off-screen) back onto one, shrunk to fit', () => {
    // Saved on the left display, which is unplugged today.
    const gone = { x: -1200, y: 40, width: 1000, height: 700, maximized: false };
    assert.deepEqual(placeWindow(gone, [full], DEFAULTS).bounds, { x: 0, y: 40, width: 1000, height: 700 });
    // Title bar above the top edge: only the body would show, nothing to grab.
    const above = { x: 300, y: -200, width: 1000, height: 700, maximized: false };
    assert.deepEqual(placeWindow(above, [full], DEFAULTS).bounds, { x: 300, y: 0, width: 1000, height: 700 });
    // Less than GRAB.width of the title bar on screen at the right edge.
    const edge = { x: 1920 - GRAB.width + 10, y: 100, width: 1000, height: 700, maximized: false };
    assert.deepEqual(placeWindow(edge, [full], DEFAULTS).bounds, {
      x: 920,
      y: 100,
      width: 1000,
      height: 700,
    });
    // Bigger than today's only display (a laptop after a large monitor): shrunk to its work area.
    const big = { x: 3000, y: 0, width: 2560, height: 1400, maximized: false };
    const small = { x: 0, y: 0, width: 1366, height: 740 };
    assert.deepEqual(placeWindow(big, [small], DEFAULTS).bounds, { x: 0, y: 0, width: 1366, height: 740 });
    // Never below the window's minimum size, even on a display smaller than it.
    const tiny = { x: 0, y: 0, width: 800, height: 600 };
    assert.deepEqual(placeWindow(big, [tiny], DEFAULTS).bounds, { x: 0, y: 0, width: 960, height: 640 });
  });

  it('with nothing saved (or no display reported), opens at the first-start size where the system puts it', () => {
    assert.deepEqual(placeWindow(null, [full], DEFAULTS), {
      bounds: { width: 1360, height: 900 },
      maximized: false,
    });
    const s = { x: 10, y: 10, width: 1000, height: 700, maximized: true };
    assert.deepEqual(placeWindow(s, [], DEFAULTS), { bounds: { width: 1360, height: 900 }, maximized: true });
  });

  it('reads back what it wrote, and refuses a damaged or foreign file with the reason (default window)', () => {
    const t = tempDir();
    try {
      const f = join(t.dir, 'sub', 'window-state.json');
      assert.deepEqual(readWindowState(f), { state: null, problem: undefined }, 'no file yet: no complaint');
      writeWindowState(f, { x: 12.4, y: -3.6, width: 1200.2, height: 800, maximized: false });
      assert.deepEqual(readWindowState(f).state, {
        x: 12,
        y: -4,
        width: 1200,
        height: 800,
        maximized: false,
      });
      assert.deepEqual(readdirSync(join(t.dir, 'sub')), ['window-state.json'], 'no temporary file left');
      const bad: [string, RegExp][] = [
        ['{"version":1,"x":0,', /not JSON/],
        ['[1,2]', /the file: /],
        ['{"version":2,"x":0,"y":0,"width":800,"height":600,"maximized":false}', /version/],
        ['{"version":1,"x":0,"y":0,"width":-5,"height":600,"maximized":false}', /width/],
        ['{"version":1,"x":1e9,"y":0,"width":800,"height":600,"maximized":false}', /x/],
        ['{"version":1,"x":0,"y":0,"width":800,"height":600,"maximized":"yes"}', /maximized/],
        [
          '{"version":1,"x":0,"y":0,"width":800,"height":600,"maximized":false,"extra":1}',
          /extra|unrecognized/i,
        ],
        ['{"version":1,"x":"0","y":0,"width":800,"height":600,"maximized":false}', /x/],
      ];
      for (const [text, why] of bad) {
        writeFileSync(f, text);
        const r = readWindowState(f);
        assert.equal(r.state, null, text);
        assert.match(r.problem ?? '', why, text);
        assert.ok(r.problem!.startsWith(f), 'the problem names the file');
      }
    } finally {
      t.cleanup();
    }
  });

  it('saves once after the moves stop (debounced), at once on close, and a failed write stops nothing', () => {
    const t = tempDir();
    try {
      const f = join(t.dir, 'window-state.json');
      const clock = manualTimers();
      let state = { x: 1, y: 2, width: 1000, height: 700, maximized: false };
      const errors: string[] = [];
      const saver = stateSaver(f, () => state, {
        delayMs: 500,
        timers: clock,
        onError: (e) => errors.push(e.message),
      });
      for (let i = 0; i < 20; i++) {
        state = { ...state, x: i };
        saver.changed();
        clock.tick(100);
      }
      assert.equal(existsSync(f), false, 'nothing written while the window keeps moving');
      clock.tick(400);
      assert.equal(readWindowState(f).state?.x, 19);
      state = { ...state, width: 1111 };
      saver.changed();
      saver.flush();
      assert.equal(readWindowState(f).state?.width, 1111, 'written at once on close');
      assert.equal(clock.pending(), 0, 'the pending save was dropped');
      const blocked = stateSaver(join(f, 'not-a-folder', 'x.json'), () => state, {
        timers: clock,
        onError: (e) => errors.push(e.message),
      });
      blocked.flush();
      assert.equal(errors.length, 1);
    } finally {
      t.cleanup();
    }
  });
});

describe('desktop shell: one instance, window kept', () => {
  const start = async (
    fake: ReturnType<typeof fakeElectron>,
    extra: { stateFile?: string; timers?: Timers } = {},
  ) => {
    const db = tempDb();
    const store = new Store(db.file);
    const service = new Service({ store, mode: 'desktop' });
    const started = startDesktop(fake.api, {
      indexFile: INDEX,
      indexUrl: INDEX_URL,
      preloadDir: '/opt/nullbench/dist/electron',
      open: () => ({ service, close: () => undefined }),
      ...extra,
    });
    fake.ready();
    const win = await started;
    return {
      win,
      async stop() {
        await service.close();
        store.close();
        db.cleanup();
      },
    };
  };

  it('a second instance quits before opening anything', async () => {
    const fake = fakeElectron({ lock: false });
    let opened = false;
    const started = startDesktop(fake.api, {
      indexFile: INDEX,
      indexUrl: INDEX_URL,
      preloadDir: '/x',
      open: () => {
        opened = true;
        return null;
      },
    });
    fake.ready();
    assert.equal(await started, null);
    assert.deepEqual(fake.log.slice(-2), ['requestSingleInstanceLock', 'quit']);
    assert.equal(opened, false, 'the database was not opened');
    assert.equal(fake.windows.length, 0);
  });

  it('the first instance, asked again, restores its minimised window and brings it to the front', async () => {
    const fake = fakeElectron();
    const s = await start(fake);
    try {
      const w = fake.windows[0].win;
      w.minimized = true;
      fake.log.length = 0;
      for (const l of fake.appHandlers.get('second-instance') ?? []) l({}, ['nullbench'], '/home/bench');
      assert.deepEqual(fake.log, ['restore', 'show', 'focus']);
      assert.equal(fake.windows.length, 1, 'no second window');
    } finally {
      await s.stop();
    }
  });

  it('opens where it was left, maximised again if it was, and keeps each move in the user data folder', async () => {
    const t = tempDir();
    try {
      const f = join(t.dir, 'window-state.json');
      writeWindowState(f, { x: 300, y: 200, width: 1100, height: 720, maximized: true });
      const clock = manualTimers();
      const fake = fakeElectron({ userData: t.dir });
      const s = await start(fake, { timers: clock });
      try {
        const opt = fake.windows[0].options as { x: number; y: number; width: number; height: number };
        assert.deepEqual([opt.x, opt.y, opt.width, opt.height], [300, 200, 1100, 720]);
        assert.deepEqual(
          opt,
          windowOptions('/opt/nullbench/dist/electron', { x: 300, y: 200, width: 1100, height: 720 }),
        );
        const w = fake.windows[0].win;
        w.emit('ready-to-show');
        assert.ok(fake.log.includes('maximize') && !fake.log.includes('show'), 'shown maximised');
        w.maximized = false;
        w.bounds = { x: 40, y: 30, width: 1000, height: 700 };
        w.emit('unmaximize');
        w.emit('move');
        clock.tick(600);
        assert.deepEqual(readWindowState(f).state, {
          x: 40,
          y: 30,
          width: 1000,
          height: 700,
          maximized: false,
        });
        w.bounds = { ...w.bounds, width: 1500 };
        w.emit('resize');
        w.emit('close');
        assert.equal(readWindowState(f).state?.width, 1500, 'saved on close without waiting');
      } finally {
        await s.stop();
      }
    } finally {
      t.cleanup();
    }
  });

  it('a damaged state file gives the first-start window, and is replaced by the next save', async () => {
    const t = tempDir();
    try {
      const f = join(t.dir, 'window-state.json');
      writeFileSync(f, 'not json at all');
      const fake = fakeElectron({ userData: t.dir });
      const s = await start(fake, { timers: manualTimers() });
      try {
        assert.deepEqual(fake.windows[0].options, windowOptions('/opt/nullbench/dist/electron'));
        fake.windows[0].win.emit('close');
        assert.equal(readWindowState(f).state?.width, 1360);
      } finally {
        await s.stop();
      }
    } finally {
      t.cleanup();
    }
  });
});
