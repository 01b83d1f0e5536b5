// The CLI for real receivers: read over the network protocol (our scripted server and the real rig-control
// daemon) and over a serial pty pair, link faults reported as gaps on stderr, and the templates, receivers
// (with the guided calibration) and plan commands.
import { describe, it, after, before } from 'node:test';
import assert from 'node:assert/strict';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { prompter } from '../../main/shells/cli/ask';
import { RigServer } from '../../main/sim/rigserver';
import { SimSerialDevice } from '../../main/sim/serialdevice';
import { Store } from '../../main/store/store';
import { runCli } from '../helpers/cli';
import { ptyPair } from '../helpers/pty';
import { startRigctld } from '../helpers/rigctld';
import { tempDir } from '../helpers/tmp';

const lines = (out: string) =>
  out
    .trim()
    .split('\n')
    .filter(Boolean)
    .map((l) => JSON.parse(l) as Record<string, number>);

describe('CLI: help for the new commands', () => {
  it('lists plan, receivers and templates, and prints --help for each', async () => {
    const r = await runCli(['--help']);
    for (const c of ['plan', 'receivers', 'templates']) {
      assert.match(r.out, new RegExp(`\\n  ${c}\\s`));
      const h = await runCli([c, '--help']);
      assert.equal(h.code, 0, c);
      assert.match(h.out, new RegExp(`nullbench ${c}`));
    }
    const read = await runCli(['read', '--help']);
    assert.match(read.out, /net:HOST:PORT/);
    assert.match(read.out, /serial:\/dev\/PATH@BAUD/);
    assert.match(read.out, /--template NAME/);
  });
});

describe('CLI read over the network rig-control protocol', () => {
  it('prints JSON lines with raw, dbm_rx, dbm_dut, freq_hz from our scripted server (IARU R.1 and the path)', async () => {
    const srv = new RigServer({ script: [-12, 0, 6] });
    const port = await srv.listen();
    try {
      const r = await runCli([
        'read',
        '--source',
        `net:127.0.0.1:${port}`,
        '--count',
        '3',
        '--json',
        '--path',
        'pad:20,cable:0.4',
      ]);
      assert.equal(r.code, 0, r.err);
      const got = lines(r.out);
      // IARU R.1: S9 = -73 dBm below 30 MHz, STRENGTH in dB relative to S9; the path adds 20.4 dB.
      assert.deepEqual(
        got.map((l) => l.dbm_rx),
        [-85, -73, -67],
      );
      assert.deepEqual(
        got.map((l) => l.dbm_dut),
        [-64.6, -52.6, -46.6],
      );
      assert.deepEqual(
        got.map((l) => l.raw),
        [-12, 0, 6],
      );
      // Without --freq-hz the rig stays where it is: the server's 7.1 MHz.
      assert.ok(got.every((l) => l.freq_hz === 7_100_000));
      assert.ok(!srv.log.some((c) => /^\+?F /.test(c)), 'not retuned');
    } finally {
      await srv.close();
    }
  });

  it('reads the real rig-control daemon (rigctld -m 1), tuned with --freq-hz', async () => {
    const d = await startRigctld();
    try {
      const r = await runCli([
        'read',
        '--source',
        `net:127.0.0.1:${d.port}`,
        '--freq-hz',
        '7100000',
        '--count',
        '3',
        '--json',
      ]);
      assert.equal(r.code, 0, r.err);
      for (const l of lines(r.out)) {
        // Source: the daemon's STRENGTH (dB re S9); IARU R.1 S9 = -73 dBm below 30 MHz.
        assert.equal(l.dbm_rx, -73 + l.raw);
        assert.equal(l.freq_hz, 7_100_000);
      }
    } finally {
      await d.kill();
    }
  });

  it('reports a dropped link as a gap on stderr, reconnects, and prints only real readings', async () => {
    const srv = new RigServer({ script: [-20, -19, -18, -17, -16] });
    const port = await srv.listen();
    try {
      srv.inject('disconnect');
      const r = await runCli(['read', '--source', `net:127.0.0.1:${port}`, '--count', '3', '--json']);
      assert.equal(r.code, 0, r.err);
      assert.match(
        r.err,
        /gap: EIO: the rig-control daemon at 127\.0\.0\.1:\d+ closed the connection; reconnecting/,
      );
      assert.match(r.err, /gap closed after/);
      // The script's first value went unanswered (the connection dropped instead): the next three follow.
      assert.deepEqual(
        lines(r.out).map((l) => l.raw),
        [-19, -18, -17],
      );
    } finally {
      await srv.close();
    }
  });

  it('gives up after --retry-for seconds when the link stays down, saying why', async () => {
    const srv = new RigServer({ script: [-20] });
    const port = await srv.listen();
    srv.inject('disconnect');
    const closing = (async () => {
      await new Promise((r) => setTimeout(r, 100));
      await srv.close();
    })();
    const r = await runCli([
      'read',
      '--source',
      `net:127.0.0.1:${port}`,
      '--count',
      '2',
      '--json',
      '--retry-for',
      '1',
    ]);
    await closing;
    assert.equal(r.code, 1);
    assert.match(r.err, /error \(EIO\): source: gave up after 1 s without a reading: .*connection refused/);
    assert.equal(r.out, '');
  });
});

describe('CLI read over a serial pty pair', () => {
  let dir: ReturnType<typeof tempDir>;
  let pty: Awaited<ReturnType<typeof ptyPair>>;
  before(async () => {
    dir = tempDir();
    pty = await ptyPair(dir.dir);
  });
  after(async () => {
    await pty.kill();
    dir.cleanup();
  });

  it('reads with --template and prints the same JSON lines', async () => {
    const dev = new SimSerialDevice({ path: pty.b, commandSet: 'db-over-s9', script: [-12.5, 3] });
    await dev.start();
    try {
      const r = await runCli([
        'read',
        '--source',
        `serial:${pty.a}@38400`,
        '--template',
        'db-over-s9',
        '--freq-hz',
        '7100000',
        '--count',
        '2',
        '--json',
        '--path',
        'pad:20',
      ]);
      assert.equal(r.code, 0, r.err);
      const got = lines(r.out);
      // IARU R.1: -73 dBm + (dB relative to S9); 20 dB pad.
      assert.deepEqual(
        got.map((l) => l.dbm_rx),
        [-85.5, -70],
      );
      assert.deepEqual(
        got.map((l) => l.dbm_dut),
        [-65.5, -50],
      );
      assert.ok(got.every((l) => l.freq_hz === 7_100_000));
      assert.equal(dev.log[0], 'FRQ 7100000');
    } finally {
      await dev.stop();
    }
  });

  it('asks for --freq-hz (a serial receiver cannot tell its frequency) and for a template', async () => {
    const a = await runCli(['read', '--source', `serial:${pty.a}@38400`, '--template', 'db-over-s9']);
    assert.equal(a.code, 2);
    assert.match(a.err, /--freq-hz: a serial receiver cannot tell its frequency/);
    const b = await runCli(['read', '--source', `serial:${pty.a}@38400`, '--freq-hz', '7e6']);
    assert.equal(b.code, 2);
    assert.match(b.err, /template: a serial receiver needs a command-set template/);
  });
});

describe('CLI templates and receivers', () => {
  it('exports a built-in template, imports an edited copy, names the field of a bad file, and removes it', async () => {
    const t = tempDir();
    try {
      const db = join(t.dir, 'x.db');
      const list = await runCli(['templates', 'list', '--db', db]);
      assert.match(list.out, /db-over-s9\s+built in/);
      const show = await runCli(['templates', 'show', 'db-over-s9', '--db', db]);
      assert.match(show.out, /terminator\s+"\\r"/);
      const ex = await runCli(['templates', 'export', 'db-over-s9', '--db', db]);
      const copy = { ...JSON.parse(ex.out), name: 'my-copy', interCommandDelayMs: 20 };
      writeFileSync(join(t.dir, 'copy.json'), JSON.stringify(copy));
      const im = await runCli(['templates', 'import', join(t.dir, 'copy.json'), '--db', db]);
      assert.equal(im.code, 0, im.err);
      assert.match((await runCli(['templates', 'list', '--db', db])).out, /my-copy\s+stored/);
      writeFileSync(join(t.dir, 'bad.json'), JSON.stringify({ ...copy, name: 'bad-one', parity: 'mark' }));
      const bad = await runCli(['templates', 'import', join(t.dir, 'bad.json'), '--db', db]);
      assert.equal(bad.code, 2);
      assert.match(bad.err, /bad\.json: parity: must be none, even or odd/);
      const rm = await runCli(['templates', 'remove', 'my-copy', '--db', db]);
      assert.equal(rm.code, 0, rm.err);
      const rmBuiltin = await runCli(['templates', 'remove', 'db-over-s9', '--db', db]);
      assert.equal(rmBuiltin.code, 1);
      assert.match(rmBuiltin.err, /built in and cannot be removed/);
    } finally {
      t.cleanup();
    }
  });

  it('adds a receiver, calibrates it step by step with a generator through a pad, and reads through the table', async () => {
    const t = tempDir();
    const srv = new RigServer({ script: [-40] });
    const port = await srv.listen();
    const ask = prompter.ask;
    try {
      const db = join(t.dir, 'x.db');
      const add = await runCli([
        'receivers',
        'add',
        '--name',
        'Test rig',
        '--source',
        `net:127.0.0.1:${port}`,
        '--max-input-dbm',
        '-10',
        '--db',
        db,
      ]);
      assert.equal(add.code, 0, add.err);
      // The operator sets the generator at each prompt; our receiver answers -40, then +2 dB re S9.
      const answers = [-40, 2];
      const asked: string[] = [];
      prompter.ask = async (_io, q) => {
        asked.push(q);
        srv.setScript([answers.shift()!]);
        return '';
      };
      const cal = await runCli([
        'receivers',
        'calibrate',
        'Test rig',
        '--freq-hz',
        '7100000',
        '--pad-db',
        '40',
        '--levels',
        '-80,-40',
        '--count',
        '2',
        '--db',
        db,
      ]);
      assert.equal(cal.code, 0, cal.err);
      assert.match(asked[0], /Set the generator to -80 dBm at 7\.100000 MHz/);
      assert.match(cal.err, /signal generator \(not the transmitter\)/);
      // Level at the receiver = generator - pad: -120 and -80 dBm.
      assert.match(cal.out, /-40\s+->\s+-120\.00 dBm\n\s+2\s+->\s+-80\.00 dBm/);
      const show = await runCli(['receivers', 'show', 'Test rig', '--db', db]);
      assert.match(show.out, /calibration\s+Test rig \(guided calibration\)/);
      srv.setScript([-19]);
      const r = await runCli(['read', '--receiver', 'Test rig', '--count', '1', '--json', '--db', db]);
      assert.equal(r.code, 0, r.err);
      assert.equal(lines(r.out)[0].dbm_rx, -100, 'halfway between the two injections');
      // A level that would exceed the rated maximum at the receiver is refused before anything is asked.
      const unsafe = await runCli([
        'receivers',
        'calibrate',
        'Test rig',
        '--freq-hz',
        '7100000',
        '--pad-db',
        '10',
        '--levels',
        '-30,10',
        '--db',
        db,
      ]);
      assert.equal(unsafe.code, 1);
      assert.match(
        unsafe.err,
        /EUNSAFE\): --levels item 2: 10 dBm through 10 dB puts 0 dBm into the receiver/,
      );
    } finally {
      prompter.ask = ask;
      await srv.close();
      t.cleanup();
    }
  });
});

describe('CLI plan', () => {
  it('runs a plan on a new session for a unit, asks for the manual steps, and shows the table', async () => {
    const t = tempDir();
    const srv = new RigServer({ script: [-30] });
    const port = await srv.listen();
    const ask = prompter.ask;
    try {
      const db = join(t.dir, 'x.db');
      const store = new Store(db);
      const d = store.createDesign({ name: 'CLI plan', notes: '' });
      const rev = store.createRevision({ designId: d.id, name: 'A', changes: '' });
      store.createUnit({ revisionId: rev.id, serial: 'CP-1', buildDate: '', builder: '', notes: '' });
      store.close();
      const asked: string[] = [];
      prompter.ask = async (_io, q) => {
        asked.push(q);
        return '';
      };
      const args = [
        '--unit',
        'CP-1',
        '--source',
        `net:127.0.0.1:${port}`,
        '--max-input-dbm',
        '10',
        '--path',
        'coupler:30,pad:20',
      ];
      const r = await runCli([
        'plan',
        'run',
        ...args,
        '--pep-w',
        '1',
        '--carrier-hz',
        '7100000',
        '--tone-hz',
        '1000',
        '--points',
        'upper,reference,carrier',
        '--average',
        '2',
        '--settle-ms',
        '0',
        '--settle-timeout-ms',
        '500',
        '--reference',
        'unbalanced',
        '--db',
        db,
      ]);
      assert.equal(r.code, 0, r.err);
      assert.match(r.out, /state|done/);
      assert.match(asked[0], /Unbalance the modulator/);
      assert.match(asked[1], /Return the balance trimmers/);
      assert.match(r.err, /\[3\/3\] Carrier/);
      // -30 dB re S9 is -103 dBm (IARU R.1); +50 dB of path: -53 dBm at every point, 0 dB against the reference.
      assert.match(r.out, /Reference \(unbalanced carrier\)\s+7\.100000\s+−53\.00/);
      assert.match(r.out, /Carrier\s+7\.100000\s+−53\.00\s+\S+\s+0\.00/);
      const id = /plan (\S+)/.exec(r.out)![1];
      const show = await runCli(['plan', 'show', id, '--json', '--db', db]);
      const v = JSON.parse(show.out);
      assert.equal(v.state, 'done');
      assert.equal(v.points.length, 3);
      const list = await runCli(['plan', 'list', '--db', db]);
      assert.match(list.out, new RegExp(`${id}\\s+done\\s+.*3/3 points`));
      const unsafe = await runCli([
        'plan',
        'run',
        ...args.slice(0, 4),
        '--max-input-dbm',
        '-30',
        '--path',
        'pad:20',
        '--pep-w',
        '1',
        '--carrier-hz',
        '7100000',
        '--tone-hz',
        '1000',
        '--db',
        db,
      ]);
      assert.equal(unsafe.code, 1);
      assert.match(unsafe.err, /EUNSAFE/);
    } finally {
      prompter.ask = ask;
      await srv.close();
      t.cleanup();
    }
  });
});
