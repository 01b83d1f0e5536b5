// The network rig-control source against the real rig-control daemon from Debian (rigctld, libhamlib-utils,
// dummy rig model 1, started here on a free loopback port) and against our scripted server for exact values
// and faults.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { Socket } from 'node:net';
import { BenchError } from '../../app/errors';
import { Corrector } from '../../main/live/correct';
import { RigServer, rawCountsFromStrength } from '../../main/sim/rigserver';
import { createSource } from '../../main/sources';
import { LinkedSource } from '../../main/sources/link';
import { parseRigNetSpec, RigNetLink, RigNetSource } from '../../main/sources/rignet';
import { freePort, startRigctld, type Daemon } from '../helpers/rigctld';

/** Asks the daemon directly, as a second client (the reference for what the rig was told). */
function ask(port: number, cmd: string): Promise<string> {
  return new Promise((ok, fail) => {
    const s = new Socket();
    let out = '';
    s.on('data', (b) => (out += b.toString()));
    s.on('error', fail);
    s.connect(port, '127.0.0.1', () => s.write(`${cmd}\nq\n`));
    // The daemon answers "q" with its own RPRT line: keep only the answer asked for.
    s.on('close', () => ok(out.replace(/^RPRT 0\n?/m, '')));
  });
}

function inner(src: ReturnType<typeof createSource>): RigNetSource {
  return (src as LinkedSource).inner as RigNetSource;
}

describe('net source parseRigNetSpec()', () => {
  it('reads host, port and options, and names a bad part', () => {
    assert.deepEqual(parseRigNetSpec('net:127.0.0.1:4532'), {
      host: '127.0.0.1',
      port: 4532,
      extended: true,
      level: 'auto',
      timeoutMs: 1000,
      mode: null,
      passbandHz: 0,
    });
    const s = parseRigNetSpec('net:[::1]:4600,plain,level=raw,mode=cw,passband=500,timeout=250');
    assert.deepEqual(
      [s.host, s.port, s.extended, s.level, s.mode, s.passbandHz, s.timeoutMs],
      ['::1', 4600, false, 'RAWSTR', 'CW', 500, 250],
    );
    // docs/references.md: the daemon's default port is 4532.
    assert.equal(parseRigNetSpec('net:localhost').port, 4532);
    assert.throws(() => parseRigNetSpec('net:127.0.0.1:99999'), /source port: port must be 1\.\.65535/);
    assert.throws(
      () => parseRigNetSpec('net:127.0.0.1:4532,levle=raw'),
      /option 1 \("levle=raw"\).*unknown option "levle"/,
    );
  });
});

describe('net source against the real rig-control daemon (rigctld -m 1)', () => {
  let d: Daemon;
  before(async () => {
    d = await startRigctld();
  });
  after(async () => {
    await d.kill();
  });

  for (const form of ['extended', 'plain'] as const) {
    it(`tunes the rig and reads STRENGTH in the ${form} form, corrected by IARU R.1`, async () => {
      const src = createSource(`net:127.0.0.1:${d.port}${form === 'plain' ? ',plain' : ''}`);
      await src.open();
      try {
        await src.setFrequency(7_100_000);
        // Source: the daemon itself, asked on a second connection, says where the rig is tuned.
        assert.equal((await ask(d.port, 'f')).trim(), '7100000');
        const c = new Corrector({ calibration: null, path: [{ kind: 'pad', db: 20 }] });
        for (let i = 0; i < 5; i++) {
          const s = await src.read();
          assert.equal(s.quantity, 'strength-db');
          assert.equal(s.freqHz, 7_100_000);
          assert.ok(Number.isInteger(s.raw) && s.raw > -60 && s.raw < 60, `STRENGTH ${s.raw}`);
          const r = c.correct(s);
          // IARU R.1: S9 = -73 dBm below 30 MHz, STRENGTH is dB relative to S9 (daemon STRENGTH 0 = S9).
          assert.equal(r.dbmRx, -73 + s.raw);
          assert.equal(r.dbmDut, r.dbmRx + 20);
        }
      } finally {
        await src.close();
      }
    });
  }

  it('learns the levels the rig offers and reads RAWSTR as raw counts when asked', async () => {
    const src = createSource(`net:127.0.0.1:${d.port},level=raw`);
    await src.open();
    try {
      assert.ok(inner(src).offered?.includes('STRENGTH') && inner(src).offered?.includes('RAWSTR'));
      assert.equal(src.quantity, 'raw');
      const s = await src.read();
      assert.equal(s.quantity, 'raw');
      assert.ok(Number.isFinite(s.raw));
    } finally {
      await src.close();
    }
  });

  it('sets mode and passband on open, as the daemon then reports them', async () => {
    const src = createSource(`net:127.0.0.1:${d.port},mode=CW,passband=500`);
    await src.open();
    try {
      // Source: the daemon's own "m" answer (mode, then passband in Hz).
      assert.deepEqual((await ask(d.port, 'm')).trim().split('\n'), ['CW', '500']);
    } finally {
      await src.close();
    }
  });

  it('maps the daemon\'s "RPRT -1" to EREJECTED naming the command and the error', async () => {
    const link = new RigNetLink('127.0.0.1', d.port, 1000);
    await link.connect();
    try {
      for (const extended of [true, false]) {
        await assert.rejects(link.transact('l NOSUCHLEVEL', extended, 1), (e: unknown) => {
          assert.ok(e instanceof BenchError);
          assert.equal(e.code, 'EREJECTED');
          assert.match(e.message, /"l NOSUCHLEVEL" with RPRT -1 \(EINVAL: invalid parameter\)/);
          return true;
        });
      }
      // The link is still in step: the next exchange works.
      const r = await link.transact('f', true, 1);
      assert.ok(Number(r.values[0]) > 0);
    } finally {
      link.close();
    }
  });

  it('says clearly when nothing listens on the port (EIO, connection refused)', async () => {
    const src = createSource(`net:127.0.0.1:${await freePort()}`);
    await assert.rejects(src.open(), (e: unknown) => {
      assert.ok(e instanceof BenchError);
      assert.equal(e.code, 'EIO');
      assert.match(
        e.message,
        /cannot connect to the rig-control daemon at 127\.0\.0\.1:\d+: connection refused/,
      );
      return true;
    });
  });
});

describe('net source against our scripted server: exact values', () => {
  it('turns STRENGTH -12, 0, +6 dB into -85, -73, -67 dBm (IARU R.1) in both forms', async () => {
    for (const plain of [false, true]) {
      const srv = new RigServer({ script: [-12, 0, 6] });
      const port = await srv.listen();
      const src = createSource(`net:127.0.0.1:${port}${plain ? ',plain' : ''}`);
      await src.open();
      try {
        await src.setFrequency(3_650_000);
        const c = new Corrector({ calibration: null, path: [] });
        const got = [];
        for (let i = 0; i < 3; i++) got.push(c.correct(await src.read()).dbmRx);
        // IARU R.1: S9 = -73 dBm below 30 MHz; 6 dB per S-unit.
        assert.deepEqual(got, [-85, -73, -67]);
        assert.equal(srv.frequencyHz, 3_650_000);
        assert.ok(srv.log.some((l) => l === `${plain ? '' : '+'}l STRENGTH`));
      } finally {
        await src.close();
        await srv.close();
      }
    }
  });

  it('reads RAWSTR counts when the rig offers no STRENGTH', async () => {
    const srv = new RigServer({ script: [-10], levels: ['RAWSTR'] });
    const port = await srv.listen();
    const src = createSource(`net:127.0.0.1:${port}`);
    await src.open();
    try {
      assert.equal(src.quantity, 'raw');
      assert.equal((await src.read()).raw, rawCountsFromStrength(-10));
    } finally {
      await src.close();
      await srv.close();
    }
  });

  it('refuses a rig that offers neither level (ENAVAIL)', async () => {
    const srv = new RigServer({ levels: ['SWR'] });
    const port = await srv.listen();
    const src = createSource(`net:127.0.0.1:${port}`);
    try {
      await assert.rejects(
        src.open(),
        (e: unknown) =>
          e instanceof BenchError && e.code === 'ENAVAIL' && /neither STRENGTH nor RAWSTR/.test(e.message),
      );
    } finally {
      await src.close();
      await srv.close();
    }
  });
});

describe('net source against our scripted server: faults', () => {
  let srv: RigServer;
  let src: ReturnType<typeof createSource>;
  before(async () => {
    srv = new RigServer({ script: Array.from({ length: 200 }, (_, i) => -50 + i), lateMs: 400 });
    const port = await srv.listen();
    src = createSource(`net:127.0.0.1:${port},timeout=200`);
    await src.open();
  });
  after(async () => {
    await src.close();
    await srv.close();
  });

  const fails = async (code: string, re: RegExp) =>
    assert.rejects(src.read(), (e: unknown) => {
      assert.ok(e instanceof BenchError, String(e));
      assert.equal(e.code, code, e.message);
      assert.match(e.message, re);
      return true;
    });

  it('reports garbage as EPROTO and reads on', async () => {
    srv.inject('garbage');
    await fails('EPROTO', /not a number/);
    assert.ok(Number.isInteger((await src.read()).raw));
  });

  it('reports a cut reply as ETIMEOUT showing what came, drops it, and reads on', async () => {
    srv.inject('cut');
    await fails('ETIMEOUT', /cut reply .* got "get_level: STR/);
    const s = await src.read();
    assert.ok(Number.isInteger(s.raw));
  });

  it('reports silence as ETIMEOUT and reads on', async () => {
    srv.inject('silence');
    await fails('ETIMEOUT', /no reply .* within 200 ms/);
    assert.ok(Number.isInteger((await src.read()).raw));
  });

  it('never takes a late answer for a later reading', async () => {
    const before = (await src.read()).raw;
    srv.inject('late');
    await fails('ETIMEOUT', /no reply/);
    const next = await src.read();
    await new Promise((r) => setTimeout(r, 500)); // the late answer (before + 1) arrives now, unasked for
    const after = await src.read();
    // The script counts up by one per answer: the withheld value is before+1, and it must not appear.
    assert.equal(next.raw, before + 2);
    assert.equal(after.raw, before + 3);
  });

  it('passes a refusal (RPRT -9) on as EREJECTED', async () => {
    srv.inject('reject');
    await fails('EREJECTED', /RPRT -9 \(ERJCTED: command rejected by the rig\)/);
  });

  it('turns a dropped connection into EIO and reconnects on the next reading, re-tuned', async () => {
    await src.setFrequency(7_050_000);
    const n = srv.connections;
    srv.inject('disconnect');
    await fails('EIO', /closed the connection; reconnecting/);
    srv.frequencyHz = 1; // as a daemon restarted with its rig elsewhere
    const s = await src.read();
    assert.ok(Number.isInteger(s.raw));
    assert.equal(srv.connections, n + 1);
    assert.equal(srv.frequencyHz, 7_050_000, 'the frequency is set again after the reconnect');
    assert.equal((src as LinkedSource).reconnects >= 1, true);
  });

  it('treats three silent exchanges in a row as a broken link and reconnects', async () => {
    const n = srv.connections;
    srv.inject('silence', 3);
    await fails('ETIMEOUT', /no reply/);
    await fails('ETIMEOUT', /no reply/);
    await fails('EIO', /3 failed exchanges in a row, reconnecting/);
    assert.ok(Number.isInteger((await src.read()).raw));
    assert.equal(srv.connections, n + 1);
  });
});
