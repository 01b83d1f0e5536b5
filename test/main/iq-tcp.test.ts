import { after, before, describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { createServer, type Server, type Socket } from 'node:net';
import { BenchError } from '../../app/errors';
import { SpectrumAverager } from '../../app/spectrum/averager';
import { measureSpectrum } from '../../app/spectrum/measure';
import { Window } from '../../app/spectrum/window';
import { dsbGenerator } from '../../main/sim/dsbsignal';
import { IqSimServer } from '../../main/sim/iqserver';
import { IqTcpClient } from '../../main/sources/iq/iqtcp';

/** A loopback server that runs `onConnect` for each client; returns it and its port. */
async function rawServer(
  onConnect: (s: Socket) => void,
): Promise<{ server: Server; port: number; sockets: Set<Socket> }> {
  const sockets = new Set<Socket>();
  const server = createServer((s) => {
    sockets.add(s);
    s.on('close', () => sockets.delete(s));
    onConnect(s);
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  const a = server.address();
  return { server, port: typeof a === 'object' && a ? a.port : 0, sockets };
}

async function closeRaw(r: { server: Server; sockets: Set<Socket> }) {
  for (const s of r.sockets) s.destroy();
  await new Promise<void>((res) => r.server.close(() => res()));
}

const code = (c: string, pattern?: RegExp) => (e: unknown) =>
  e instanceof BenchError && e.code === c && (!pattern || pattern.test(e.message));

describe('IqTcpClient against the IQ simulator server', () => {
  let sim: IqSimServer;
  before(async () => {
    // 40 dB suppression, IMD3 at -35 dBc, sidebands at -10 dBFS, carrier 10 kHz above 7.09 MHz.
    sim = await IqSimServer.start({
      pace: 'fast',
      sampleRate: 240_000,
      centerHz: 7_090_000,
      generator: dsbGenerator({
        carrierHz: 7_100_000,
        toneHz: 1000,
        suppressionDb: 40,
        imd3Dbc: -35,
        toneDbfs: -10,
        noiseDbfsHz: -100,
      }),
    });
  });
  after(() => sim.close());

  it('reads the greeting: tuner type and gain count', async () => {
    const c = await new IqTcpClient({ port: sim.port }).connect();
    assert.equal(c.tunerType, 5);
    assert.equal(c.gainCount, 29);
    assert.match(c.toString(), /127\.0\.0\.1/);
    await c.close();
  });

  it('sends 5-byte commands the server obeys: frequency, sample rate, gain, correction, AGC', async () => {
    const c = await new IqTcpClient({ port: sim.port }).connect();
    const before = sim.state.commands.length;
    await c.setFrequency(7_095_000);
    await c.setGain(49.6);
    await c.setFrequencyCorrection(-3);
    await c.setDigitalAgc(true);
    await c.setSampleRate(240_000);
    for (let i = 0; i < 100 && sim.state.commands.length < before + 6; i++)
      await new Promise((r) => setTimeout(r, 10));
    // rtl_tcp command codes (docs/references.md § SDR TCP stream): 0x01 frequency, 0x03 gain mode, 0x04 gain in tenths of dB,
    // 0x05 ppm, 0x08 digital AGC, 0x02 sample rate.
    assert.deepEqual(sim.state.commands.slice(before), [
      [0x01, 7_095_000],
      [0x03, 1],
      [0x04, 496],
      [0x05, 0xfffffffd],
      [0x08, 1],
      [0x02, 240_000],
    ]);
    assert.equal(sim.state.centerHz, 7_095_000);
    assert.equal(sim.state.gainTenthsDb, 496);
    assert.equal(sim.state.ppm, -3);
    await c.setGain('auto');
    await c.setFrequency(7_090_000);
    await c.close();
  });

  it('readBlock(n) returns 2n bytes of I,Q; readFloat applies the zero offset', async () => {
    const c = await new IqTcpClient({ port: sim.port }).connect();
    const b = await c.readBlock(1000);
    assert.equal(b.length, 2000);
    c.zero = 127;
    const f = await c.readFloat(10);
    assert.equal(f.length, 20);
    for (const v of f) assert.ok(v >= -1 && v <= 1);
    await c.close();
  });

  it('streams a DSB signal the FFT measures at 40 dB suppression within 0.5 dB', async () => {
    const c = await new IqTcpClient({ port: sim.port, timeoutMs: 10_000 }).connect();
    const n = 16384;
    const w = Window.flatTop(n);
    const avg = await SpectrumAverager.create(w);
    await c.discard(n); // samples in flight from before
    for (let k = 0; k < 16; k++) avg.pushU8(await c.readBlock(n), 0, c.zero);
    await c.close();
    // The carrier sits 10 kHz above the centre the server is tuned to.
    const m = measureSpectrum(avg.spectrum(), { sampleRate: 240_000, carrierHz: 10_000, toneHz: 1000 });
    avg.dispose();
    assert.ok(Math.abs((m.suppression?.db as number) - 40) < 0.5, `suppression ${m.suppression?.db}`);
    assert.ok(Math.abs((m.imd3?.db as number) + 35) < 0.5, `IMD3 ${m.imd3?.db}`);
  });

  it('reports EIO when the server goes away mid-stream', async () => {
    const own = await IqSimServer.start({ pace: 'fast', sampleRate: 48_000 });
    const c = await new IqTcpClient({ port: own.port }).connect();
    await c.readBlock(100);
    await own.close();
    await assert.rejects(
      (async () => {
        for (;;) await c.readBlock(1 << 16);
      })(),
      code('EIO'),
    );
    await c.close();
  });

  it('drops samples for a client that falls behind instead of sending them late', async () => {
    const starts: number[] = [];
    const own = await IqSimServer.start({
      sampleRate: 10_000_000,
      blockSamples: 16384,
      maxLagSeconds: 0.05,
      generator: (out, start) => {
        starts.push(start);
        out.fill(0);
      },
    });
    const c = await new IqTcpClient({ port: own.port, maxBufferedBytes: 1 << 20 }).connect();
    await c.readBlock(1000);
    await new Promise((r) => setTimeout(r, 1500)); // 30 MB of samples, far more than the socket buffers hold
    // Read through what the socket buffers held until the server's fresh samples arrive.
    const skipped = () => starts.some((s, i) => i > 0 && s - starts[i - 1] > 16384);
    for (let i = 0; i < 800 && !skipped(); i++) await c.readBlock(65536);
    await c.close();
    await own.close();
    const gaps = starts.slice(1).map((s, i) => s - starts[i]);
    assert.ok(
      gaps.some((g) => g > 16384),
      'the server skipped ahead at least once',
    );
    assert.ok(
      gaps.every((g) => g >= 16384),
      'and never repeated samples',
    );
  });

  it('paces samples in real time by default', async () => {
    const own = await IqSimServer.start({ sampleRate: 100_000, blockSamples: 1000 });
    const c = await new IqTcpClient({ port: own.port }).connect();
    const t0 = performance.now();
    await c.readBlock(20_000); // 0.2 s of samples
    const ms = performance.now() - t0;
    await c.close();
    await own.close();
    // Lower bound only: 0.2 s of samples cannot arrive sooner than 0.2 s after the first (the pacing holds back
    // a block until its time); an upper bound would measure the machine, not the server.
    assert.ok(ms > 120, `took ${ms} ms`);
  });
});

describe('IqTcpClient errors', () => {
  it("rejects a greeting that is not the protocol's with EPROTO, showing what came", async () => {
    const r = await rawServer((s) => s.write('HTTP/1.1 400 Bad Request\r\n\r\n'));
    try {
      await assert.rejects(
        new IqTcpClient({ port: r.port }).connect(),
        code('EPROTO', /not an SDR sample server: its greeting starts "HTTP\/1\.1 400" \(48 54 54 50/),
      );
    } finally {
      await closeRaw(r);
    }
  });

  it('rejects a greeting cut short by the server closing', async () => {
    const r = await rawServer((s) => s.end(Buffer.from('RTL0')));
    try {
      await assert.rejects(
        new IqTcpClient({ port: r.port }).connect(),
        code('EPROTO', /after 4 of the 12 greeting bytes/),
      );
    } finally {
      await closeRaw(r);
    }
  });

  it('times out on a server that says nothing', async () => {
    const r = await rawServer(() => undefined);
    try {
      await assert.rejects(
        new IqTcpClient({ port: r.port, timeoutMs: 150 }).connect(),
        code('ETIMEOUT', /0 of 12 bytes/),
      );
    } finally {
      await closeRaw(r);
    }
  });

  it('reports EIO when nothing listens', async () => {
    const r = await rawServer(() => undefined);
    const port = r.port;
    await closeRaw(r);
    await assert.rejects(new IqTcpClient({ port }).connect(), code('EIO', /cannot connect to 127\.0\.0\.1/));
  });

  it('checks its arguments before sending', async () => {
    assert.throws(() => new IqTcpClient({ port: 70000 }), code('EINVAL'));
    const r = await rawServer((s) => s.write(Buffer.from('RTL0\0\0\0\x05\0\0\0\x1d', 'latin1')));
    try {
      const c = await new IqTcpClient({ port: r.port }).connect();
      assert.throws(() => c.setFrequency(-1), code('EINVAL'));
      assert.throws(() => c.setSampleRate(0), code('EINVAL'));
      await assert.rejects(c.setGain(-5), code('EINVAL'));
      await assert.rejects(c.readBlock(0), code('EINVAL'));
      await c.close();
    } finally {
      await closeRaw(r);
    }
  });
});
