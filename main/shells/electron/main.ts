// Runs in the Electron main process. The desktop shell: one window on the built renderer, the service behind
// IPC. Thin on purpose: everything else is the same code the web mode and the CLI run.
import { app, BrowserWindow, dialog, ipcMain } from 'electron';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { EVENTS } from '../../../app/api';
import { defaultDbPath, rendererDir } from '../../paths';
import { Service, toFailure } from '../../service';
import { Store } from '../../store/store';
import { electronPdf } from './sheetpdf';
import { CALL_CHANNEL, EVENT_CHANNEL_PREFIX, isTrustedSenderUrl, windowOptions } from './config';

app.enableSandbox();
const indexFile = join(rendererDir(), 'index.html');
const indexUrl = pathToFileURL(indexFile).href;

// Navigation away from our page and new windows are never allowed, in any web contents.
app.on('web-contents-created', (_e, contents) => {
  contents.on('will-navigate', (event) => event.preventDefault());
  contents.on('will-attach-webview', (event) => event.preventDefault());
  contents.setWindowOpenHandler(() => ({ action: 'deny' }));
});

app.whenReady().then(() => {
  // The Electron build of the SQLite binding lives apart from node_modules (npm run electron:native).
  const resources = (process as { resourcesPath?: string }).resourcesPath;
  const candidates = [
    process.env.NULLBENCH_SQLITE_BINDING,
    resources && join(resources, 'electron-native', 'better_sqlite3.node'),
    join(__dirname, '..', '..', 'build', 'electron-native', 'better_sqlite3.node'),
  ].filter((p): p is string => !!p);
  const binding = candidates.find((p) => existsSync(p));
  if (!binding) {
    dialog.showErrorBox(
      'Nullbench',
      'The database driver is not built for the desktop shell: run "npm run electron:native" once.',
    );
    app.quit();
    return;
  }
  const store = new Store(process.env.NULLBENCH_DB ?? defaultDbPath(), { nativeBinding: binding });
  const service = new Service({ store, mode: 'desktop', pdf: electronPdf });

  ipcMain.handle(CALL_CHANNEL, async (event, name, args) => {
    if (!isTrustedSenderUrl(event.senderFrame?.url, indexUrl)) {
      return { ok: false, code: 'EREJECTED', message: 'call from an untrusted frame refused' };
    }
    if (typeof name !== 'string') return toFailure(new Error('call name must be a string'));
    // Service.call parses the arguments with the contract's zod schema before any handler runs.
    return service.call(name, args);
  });

  const win = new BrowserWindow(windowOptions(__dirname));
  for (const ev of EVENTS) {
    service.listen(ev, (payload) => {
      if (!win.webContents.isDestroyed()) win.webContents.send(EVENT_CHANNEL_PREFIX + ev, payload);
    });
  }
  win.once('ready-to-show', () => win.show());
  void win.loadFile(indexFile);

  app.on('window-all-closed', () => {
    void service.close().finally(() => {
      store.close();
      app.quit();
    });
  });
});
