// Runs in the Electron main process. The desktop shell: one window on the built renderer, the service behind
// IPC. Thin on purpose: the wiring (and its protections) is wire.ts; everything else is the same code the
// web mode and the CLI run.
import * as electron from 'electron';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { defaultDbPath, rendererDir } from '../../paths';
import { Service } from '../../service';
import { Store } from '../../store/store';
import { electronPdf } from './sheetpdf';
import { startDesktop } from './wire';

const indexFile = join(rendererDir(), 'index.html');

void startDesktop(electron, {
  indexFile,
  indexUrl: pathToFileURL(indexFile).href,
  preloadDir: __dirname,
  open() {
    // The Electron build of the SQLite binding lives apart from node_modules (npm run electron:native).
    const resources = (process as { resourcesPath?: string }).resourcesPath;
    const candidates = [
      process.env.NULLBENCH_SQLITE_BINDING,
      resources && join(resources, 'electron-native', 'better_sqlite3.node'),
      join(__dirname, '..', '..', 'build', 'electron-native', 'better_sqlite3.node'),
    ].filter((p): p is string => !!p);
    const binding = candidates.find((p) => existsSync(p));
    if (!binding) {
      electron.dialog.showErrorBox(
        'Nullbench',
        'The database driver is not built for the desktop shell: run "npm run electron:native" once.',
      );
      return null;
    }
    const store = new Store(process.env.NULLBENCH_DB ?? defaultDbPath(), { nativeBinding: binding });
    return { service: new Service({ store, mode: 'desktop', pdf: electronPdf }), close: () => store.close() };
  },
});
