// The serial template source over a socat pty pair (Debian package socat), with our simulated device on the
// far end speaking the built-in command sets: exact values, tuning, and faults (garbage, cut replies,
// silence, the line closed and coming back).
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import { fitCalibrationFromInjections } from '../../app/calibration';
import { iaruR1SUnitCalibration } from '../../app/receiver';
import { Corrector } from '../../main/live/correct';
import { SimBench } from '../../main/sim/bench';
import { SimSerialDevice, hexCountsFromStrength } from '../../main/sim/serialdevice';
import { createSource } from '../../main/sources';
import type { LinkedSource } from '../../main/sources/link';
import { parseSerialSpec } from '../../main/sources/serial';
import { ptyPair, type PtyPair } from '../helpers/pty';
import { tempDir } from '../helpers/tmp';

describe('serial source parseSerialSpec()', () => {
  it('reads the port, the baud rate and options, and names a bad part', () => {
    assert.deepEqual(parseSerialSpec('serial:/dev/ttyUSB0@38400'), {
      path: '/dev/ttyUSB0',
      baud: 38400,
      template: null,
      timeoutMs: null,
    });
    assert.deepEqual(parseSerialSpec('serial:COM3@9600,template=db-over-s9,timeout=300'), {
      path: 'COM3',
      baud: 9600,
      template: 'db-over-s9',
      timeoutMs: 300,
    });
    assert.throws(() => parseSerialSpec('serial:/dev/ttyUSB0'), /needs the port and the baud rate/);
    assert.throws(
      () => parseSerialSpec('serial:/dev/ttyUSB0@38401'),
      /source baud: baud rate "38401" is not one of/,
    );
  });

  it('refuses a serial source without a template, or with an unknown one, naming it', () => {
    assert.throws(
      () => createSource('serial:/dev/ttyS0@9600'),
      /template: a serial receiver needs a command-set template/,
    );
    assert.throws(() => createSource('serial:/dev/ttyS0@9600,template=nope'), /no template named "nope"/);
  });

  it('says clearly when the port does not exist (EIO)', async () => {
    const src = createSource('serial:/dev/nullbench-no-such-port@9600,template=db-over-s9');
    await assert.rejects(src.open(), (e: unknown) => {
      assert.ok(e instanceof BenchError);
      assert.equal(e.code, 'EIO');
      assert.match(
        e.message,
        /cannot open \/dev\/nullbench-no-such-port: no such port \(is the adapter plugged in/,
      );
      return true;
    });
  });
});

describe('serial source over a pty pair', () => {
  let dir: ReturnType<typeof tempDir>;
  let pty: PtyPair;
  before(async () => {
    dir = tempDir();
    pty = await ptyPair(dir.dir);
  });
  after(async () => {
    await pty.kill();
    dir.cleanup();
  });

  it('db-over-s9: tunes with "FRQ {hz}", reads -12.5, 0, +20.3 dB re S9 as -85.5, -73, -52.7 dBm (IARU R.1)', async () => {
    const dev = new SimSerialDevice({ path: pty.b, commandSet: 'db-over-s9', script: [-12.5, 0, 20.3] });
    await dev.start();
    const src = createSource(`serial:${pty.a}@38400,template=db-over-s9`);
    await src.open();
    try {
      await src.setFrequency(7_101_000);
      assert.equal(dev.frequencyHz, 7_101_000);
      assert.deepEqual(dev.log.slice(0, 1), ['FRQ 7101000']);
      const c = new Corrector({ calibration: null, path: [{ kind: 'pad', db: 20 }] });
      const got = [];
      for (let i = 0; i < 3; i++) {
        const s = await src.read();
        assert.equal(s.freqHz, 7_101_000);
        got.push(c.correct(s));
      }
      // IARU R.1: S9 = -73 dBm below 30 MHz; the value is dB relative to S9.
      assert.deepEqual(
        got.map((r) => Number(r.dbmRx.toFixed(3))),
        [-85.5, -73, -52.7],
      );
      assert.deepEqual(
        got.map((r) => Number(r.dbmDut.toFixed(3))),
        [-65.5, -53, -32.7],
      );
    } finally {
      await src.close();
      await dev.stop();
    }
  });

  it('hex-counts: 7 data bits, even parity; counts through a fitted table give back the injected levels', async () => {
    // The table a guided calibration would fit: two injections through a 30 dB pad.
    const cal = fitCalibrationFromInjections(
      [
        { raw: hexCountsFromStrength(-40), generatorDbm: -83, padDb: 30, freqHz: 7.1e6 },
        { raw: hexCountsFromStrength(20), generatorDbm: -23, padDb: 30, freqHz: 7.1e6 },
      ],
      'test table',
      { quantity: 'raw' },
    );
    const dev = new SimSerialDevice({ path: pty.b, commandSet: 'hex-counts', script: [-40, -10, 20] });
    await dev.start();
    const src = createSource(`serial:${pty.a}@9600,template=hex-counts`);
    await src.open();
    try {
      await src.setFrequency(7_100_000);
      const c = new Corrector({ calibration: cal, path: [] });
      const counts = [];
      const dbm = [];
      for (let i = 0; i < 3; i++) {
        const s = await src.read();
        assert.equal(s.quantity, 'raw');
        counts.push(s.raw);
        dbm.push(Number(c.correct(s).dbmRx.toFixed(3)));
      }
      // The set-frequency command has no reply: it went out before the first query.
      assert.deepEqual(dev.log.slice(0, 2), ['T7100.000', 'R']);
      assert.deepEqual(counts, [1248, 1848, 2448]);
      // Level at the receiver = generator - pad (-113 and -53 dBm), linear in counts between (computed).
      assert.deepEqual(dbm, [-113, -83, -53]);
    } finally {
      await src.close();
      await dev.stop();
    }
  });

  it('s-point: S-units through the R.1 table in S-units (S9 = -73 dBm, 6 dB per S-unit); no tuning', async () => {
    const dev = new SimSerialDevice({ path: pty.b, commandSet: 's-point', script: [0, -24, 12] });
    await dev.start();
    const src = createSource(`serial:${pty.a}@4800,template=s-point`);
    await src.open();
    try {
      assert.equal(src.caps.tune, false);
      await src.setFrequency(3_700_000); // only recorded: tuned by hand
      assert.deepEqual(dev.log, []);
      const c = new Corrector({ calibration: iaruR1SUnitCalibration(), path: [] });
      const got = [];
      for (let i = 0; i < 3; i++) got.push(Number(c.correct(await src.read()).dbmRx.toFixed(3)));
      // IARU R.1: S9 = -73 dBm, S5 = -97 dBm, S9 + 12 dB = -61 dBm.
      assert.deepEqual(got, [-73, -97, -61]);
    } finally {
      await src.close();
      await dev.stop();
    }
  });

  it('survives garbage, a cut reply and silence, each reported with its own code, reading on after each', async () => {
    const dev = new SimSerialDevice({ path: pty.b, commandSet: 'db-over-s9', script: [-3] });
    await dev.start();
    const src = createSource(`serial:${pty.a}@38400,template=db-over-s9,timeout=150`);
    await src.open();
    try {
      const cases: [Parameters<SimSerialDevice['inject']>[0], string, RegExp][] = [
        ['garbage', 'EPROTO', /does not match the template's pattern/],
        ['cut', 'ETIMEOUT', /cut reply .* got "LVL /],
        ['silence', 'ETIMEOUT', /no reply .* within 150 ms/],
        ['refuse', 'EPROTO', /reply "ERR" does not match/],
      ];
      for (const [fault, code, re] of cases) {
        dev.inject(fault);
        await assert.rejects(src.read(), (e: unknown) => {
          assert.ok(e instanceof BenchError);
          assert.equal(e.code, code, `${fault}: ${e.message}`);
          assert.match(e.message, re);
          return true;
        });
        assert.equal((await src.read()).raw, -3, `reads again after ${fault}`);
      }
    } finally {
      await src.close();
      await dev.stop();
    }
  });

  it('when the line closes (pty gone) reports EIO, and reconnects and re-tunes once it is back', async () => {
    let dev = new SimSerialDevice({
      path: pty.b,
      commandSet: 'db-over-s9',
      bench: new SimBench({ seed: 4 }),
    });
    await dev.start();
    const src = createSource(`serial:${pty.a}@38400,template=db-over-s9`);
    await src.open();
    try {
      await src.setFrequency(7_099_000);
      await src.read();
      await dev.stop();
      await pty.kill();
      await assert.rejects(src.read(), (e: unknown) => {
        assert.ok(e instanceof BenchError);
        assert.equal(e.code, 'EIO');
        assert.match(e.message, /went away \(adapter unplugged or the line closed\).*; reconnecting/);
        return true;
      });
      // While it is gone every attempt says so, with the next try's time.
      await assert.rejects(
        src.read(),
        /reconnect attempt 1 failed: cannot open .*no such port.*next attempt in/,
      );
      await pty.restart();
      dev = new SimSerialDevice({ path: pty.b, commandSet: 'db-over-s9', script: [7] });
      await dev.start();
      let s = null;
      for (let i = 0; i < 20 && !s; i++) s = await src.read().catch(() => null);
      assert.ok(s, 'reading again after the line came back');
      assert.equal(s.raw, 7);
      assert.equal(dev.log[0], 'FRQ 7099000', 'the frequency is set again first');
      assert.ok((src as LinkedSource).reconnects >= 1);
    } finally {
      await src.close();
      await dev.stop();
    }
  });
});
