// The support log: start and stop with the version, notices (link faults among them), every failed call with
// its code; no access token in it, no call arguments; rotated at its size limit, keeping a few old files.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { Service, VERSION } from '../../main/service';
import { Store } from '../../main/store/store';
import { SUPPORT_LOG_KEEP, SUPPORT_LOG_MAX_BYTES, SupportLog, scrub } from '../../main/service/supportlog';
import { tempDir } from '../helpers/tmp';
import { runBin } from '../helpers/cli';

const lines = (file: string) =>
  readFileSync(file, 'utf8')
    .trim()
    .split('\n')
    .map((l) => JSON.parse(l) as Record<string, unknown>);

describe('support log', () => {
  it('records start, failed calls with their codes, notices and stop; never arguments or tokens', async () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'support.jsonl');
      const store = new Store(join(tmp.dir, 'bench.db'));
      const svc = new Service({ store, mode: 'web', supportLog: new SupportLog(file) });
      const secret = 'nbt_' + 'Q'.repeat(43);
      await svc.call('getSession', { sessionId: 'no-such-session' });
      await svc.call('createDesign', { name: '', notes: secret });
      await svc.call('startSession', {
        design: 'Reed Bunting 20',
        revision: 'A',
        serial: 'RB-1',
        receiver: { name: 'rx', source: 'sim', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
        path: [{ kind: 'pad', db: 10 }],
        carrierHz: 14.2e6,
        toneHz: 1000,
        txPepDbm: 50,
        trims: [{ key: 'A', label: 'Balance', unit: 'turns', min: 0, max: 10 }],
      });
      await svc.close();
      store.close();
      const got = lines(file);
      assert.deepEqual(
        got.map((l) => l.event),
        ['start', 'failure', 'failure', 'failure', 'stop'],
      );
      assert.deepEqual(
        [got[0].version, got[0].mode, got[0].database],
        [VERSION, 'web', join(tmp.dir, 'bench.db')],
      );
      assert.deepEqual([got[1].call, got[1].code, got[1].field], ['getSession', 'ENOTFOUND', 'sessionId']);
      assert.deepEqual([got[2].call, got[2].code], ['createDesign', 'EINVAL']);
      assert.deepEqual([got[3].call, got[3].code], ['startSession', 'EUNSAFE']);
      for (const l of got) assert.equal(typeof l.t, 'string');
      const text = readFileSync(file, 'utf8');
      assert.ok(!text.includes(secret), 'a token reached the support log');
      assert.ok(!text.includes('Reed Bunting'), 'call arguments reached the support log');
    } finally {
      tmp.cleanup();
    }
  });

  it('takes tokens out of any message', () => {
    assert.equal(
      scrub('refused nbt_abc-DEF_123 from http://x/?token=nbt_zz&a=1'),
      'refused nbt_[removed] from http://x/?token=[removed]&a=1',
    );
  });

  it(`rotates at ${SUPPORT_LOG_MAX_BYTES} bytes, keeping ${SUPPORT_LOG_KEEP} older files`, () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'support.jsonl');
      const log = new SupportLog(file);
      const message = 'link lost: '.padEnd(1000, 'x');
      const per = Math.ceil(SUPPORT_LOG_MAX_BYTES / 1000);
      for (let i = 0; i < per * (SUPPORT_LOG_KEEP + 2); i++)
        log.write({ event: 'notice', level: 'warn', code: 'EIO', message });
      assert.ok(statSync(file).size <= SUPPORT_LOG_MAX_BYTES);
      for (let i = 1; i <= SUPPORT_LOG_KEEP; i++) {
        assert.ok(existsSync(`${file}.${i}`), `${file}.${i}`);
        assert.ok(statSync(`${file}.${i}`).size <= SUPPORT_LOG_MAX_BYTES);
      }
      assert.ok(!existsSync(`${file}.${SUPPORT_LOG_KEEP + 1}`));
    } finally {
      tmp.cleanup();
    }
  });

  it('is named by nullbench --help, and can be turned off', () => {
    const tmp = tempDir();
    try {
      const file = join(tmp.dir, 'here.jsonl');
      assert.match(
        runBin(['--help'], { NULLBENCH_SUPPORT_LOG: file }).out,
        new RegExp(`Support log .*: ${file}`),
      );
      assert.match(runBin(['--help'], { NULLBENCH_SUPPORT_LOG: 'off' }).out, /Support log .*: off/);
      const r = runBin(['designs', '--db', join(tmp.dir, 'x.db')], { NULLBENCH_SUPPORT_LOG: file });
      assert.notEqual(r.code, 0); // no database there yet: refused, and the refusal is in the log
      assert.ok(lines(file).some((l) => l.event === 'failure' || l.event === 'start'));
    } finally {
      tmp.cleanup();
    }
  });
});
