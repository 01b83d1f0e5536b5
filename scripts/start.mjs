// Runs in Node. `npm start`: the desktop window when Electron's binary is installed; otherwise the local
// web mode on the simulated bench, printing its URL (and opening a browser when there is a display).
import { spawn } from 'node:child_process';
import { createRequire } from 'node:module';
import { existsSync } from 'node:fs';

const require = createRequire(import.meta.url);
const extra = process.argv.slice(2);

function electronBinary() {
  try {
    const p = require('electron'); // the package exports the path of its binary
    return typeof p === 'string' && existsSync(p) ? p : null;
  } catch {
    return null;
  }
}

if (!existsSync('dist/cli.js')) {
  console.error('Nullbench is not built yet: run "npm run build" first.');
  process.exit(1);
}

const bin = electronBinary();
if (bin && !process.env.NULLBENCH_WEB) {
  const child = spawn(bin, ['dist/electron/main.cjs', ...extra], { stdio: 'inherit' });
  child.on('exit', (code) => process.exit(code ?? 0));
} else {
  if (!bin)
    console.log('Desktop shell not installed here (no Electron binary): starting the web mode instead.');
  const port = process.env.PORT ?? '8747';
  const child = spawn(process.execPath, ['dist/cli.js', 'serve', '--port', port, ...extra], {
    stdio: ['inherit', 'pipe', 'inherit'],
  });
  child.stdout.on('data', (buf) => {
    process.stdout.write(buf);
    const m = buf.toString().match(/http:\/\/[^\s]+/);
    if (m && (process.env.DISPLAY || process.platform !== 'linux') && !process.env.CI) {
      const opener =
        process.platform === 'darwin' ? 'open' : process.platform === 'win32' ? 'explorer' : 'xdg-open';
      spawn(opener, [m[0]], { stdio: 'ignore', detached: true })
        .on('error', () => {})
        .unref();
    }
  });
  const stop = () => child.kill('SIGINT');
  process.on('SIGINT', stop);
  process.on('SIGTERM', stop);
  child.on('exit', (code) => process.exit(code ?? 0));
}
