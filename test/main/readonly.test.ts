// Read-only use: the commands that only read (units, designs, export, sheet, compare, limits) work on a database
// on read-only media; a command that writes is refused with the file and the system's reason; a database that
// is missing or unopenable is named with why.
import { after, before, describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { execFileSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, readFileSync, readdirSync, rmdirSync } from 'node:fs';
import { join } from 'node:path';
import { demoDb } from '../helpers/demo';
import { tempDir } from '../helpers/tmp';
import { runCli } from '../helpers/cli';

const mount = (...args: string[]) => execFileSync('mount', args, { stdio: 'pipe' });

describe('a database on read-only media', () => {
  const tmp = tempDir();
  const media = join(tmp.dir, 'media');
  const out = join(tmp.dir, 'out');
  const file = join(media, 'bench.db');
  let mounted = false;
  let skip = '';

  before(async () => {
    mkdirSync(media);
    mkdirSync(out);
    try {
      mount('-t', 'tmpfs', '-o', 'size=16m', 'tmpfs', media);
      mounted = true;
    } catch (e) {
      skip = `mounting a tmpfs is not allowed here (${(e as Error).message.split('\n')[0]})`;
      return;
    }
    const demo = await demoDb();
    copyFileSync(demo.file, file);
    demo.cleanup();
    mount('-o', 'remount,ro', media);
  });

  after(() => {
    if (mounted) mount('-o', 'remount,rw', media);
    if (mounted) execFileSync('umount', [media]);
    if (existsSync(media)) rmdirSync(media);
    tmp.cleanup();
  });

  it('lists, exports, prints sheets, compares and lists limits from it; nothing appears beside it', async (t) => {
    if (skip) return t.skip(skip);
    const ok = async (args: string[]) => {
      const r = await runCli([...args, '--db', file]);
      assert.equal(r.code, 0, `${args.join(' ')}: ${r.err}`);
      return r.out;
    };
    assert.match(await ok(['units']), /HD40-0101/);
    assert.match(await ok(['designs']), /Heron DSB-40/);
    await ok(['export', '--out', join(out, 'all.json')]);
    assert.match(readFileSync(join(out, 'all.json'), 'utf8'), /"HD40-0101"/);
    await ok(['export', '--csv', '--unit', 'HD40-0101', '--out', join(out, 'u.csv')]);
    await ok(['sheet', '--unit', 'HD40-0101', '--out', join(out, 'u.html')]);
    assert.match(readFileSync(join(out, 'u.html'), 'utf8'), /HD40-0101/);
    assert.match(await ok(['compare', '--design', 'Heron DSB-40']), /R1/);
    await ok(['limits']);
    assert.deepEqual(readdirSync(media), ['bench.db'], 'a -wal, -shm or backup file was made');
  });

  it('refuses a command that writes, naming the file and the reason', async (t) => {
    if (skip) return t.skip(skip);
    const r = await runCli(['add', '--db', file, '--design', 'Night Heron']);
    assert.notEqual(r.code, 0);
    assert.match(r.err, new RegExp(`cannot open the database ${file.replace(/[.]/g, '\\.')}: .*`));
    assert.match(r.err, /read-only|cannot be written/);
  });
});

describe('a database that is not there', () => {
  it('is named by a command that only reads, and is not created', async () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'never-made.db');
      const r = await runCli(['units', '--db', file]);
      assert.notEqual(r.code, 0);
      assert.match(r.err, /no database at .*never-made\.db: nothing has been stored there yet/);
      assert.ok(!existsSync(file));
    } finally {
      tmp.cleanup();
    }
  });
});
