import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import type { SpectrumFrame } from '../../app/api';
import type { LiveBench } from '../../main/live/live';
import { SimSource } from '../../main/sources/sim';
import { IqSimServer } from '../../main/sim/iqserver';
import { dsbGenerator } from '../../main/sim/dsbsignal';
import { serviceWithSession } from '../helpers/session';
import { connectionOf } from '../../main/store/connection';

/** The next `skip + 1`th spectrum frame: frames averaged partly before a change are skipped. */
function nextFrame(
  listen: (cb: (f: SpectrumFrame) => void) => () => void,
  skip: number,
): Promise<SpectrumFrame> {
  return new Promise((resolve) => {
    let seen = 0;
    const off = listen((f) => {
      if (seen++ < skip) return;
      off();
      resolve(f);
    });
  });
}

describe('Service spectrumStart/spectrumKeep (iqsim)', () => {
  it('flags every kept line as overload when the declared 30 W clips the SDR, instead of quoting them', async () => {
    // 44.77 dBm PEP through 50 dB: the SDR's 8-bit samples clip, so its levels are low and must not be quoted.
    const ctx = await serviceWithSession({ fast: false, txPepDbm: 10 * Math.log10(30_000) });
    const { service } = ctx;
    try {
      await service.invoke('openSession', { sessionId: ctx.session.id });
      await service.invoke('spectrumStart', { source: 'iqsim' });
      await nextFrame((cb) => service.listen('spectrum', cb), 2);
      const kept = await service.invoke('spectrumKeep', { note: 'too hot' });
      assert.equal(kept.length, 7);
      assert.ok(
        kept.every((r) => r.overload),
        kept.map((r) => `${r.role} ${r.dbmDut.toFixed(1)} dBm overload=${r.overload}`).join('; '),
      );
      await service.invoke('spectrumStop', {});
    } finally {
      await ctx.cleanup();
    }
  });

  it("measures the simulated transmitter's carrier suppression within 0.5 dB as its trimmers move", async () => {
    const ctx = await serviceWithSession({ fast: false });
    const { service } = ctx;
    try {
      await service.invoke('openSession', { sessionId: ctx.session.id });
      const live = service.session.bench as LiveBench;
      assert.ok(live.source instanceof SimSource);
      const tx = live.source.bench.tx;
      const state = await service.invoke('spectrumStart', { source: 'iqsim' });
      assert.equal(state.running, true);
      const listen = (cb: (f: SpectrumFrame) => void) => service.listen('spectrum', cb);
      const bal = tx.trueBalance();
      for (const wantDb of [30, 45]) {
        // Off the balance point along A only: residual carrier amplitude gainA * dA relative to a sideband.
        const dA = Math.sqrt(10 ** (-wantDb / 10)) / tx.cfg.gainA;
        await service.invoke('setTrims', { trims: { A: bal.A + dA, B: bal.B } });
        const f = await nextFrame(listen, 2);
        // The sim's own figure: DSB, both sidebands equal, so suppression = sideband / carrier power.
        const expected = -10 * Math.log10(tx.carrierRatio());
        assert.ok(f.suppression, 'both tones seen');
        assert.equal(f.suppression.floorLimited, false);
        assert.ok(
          Math.abs(f.suppression.db - expected) <= 0.5,
          `measured ${f.suppression.db.toFixed(2)} dB, sim set ${expected.toFixed(2)} dB`,
        );
        assert.ok(f.traceHz.length <= 480 && f.traceHz.length === f.traceDbfs.length);
      }

      const kept = await service.invoke('spectrumKeep', { note: 'after A' });
      const roles = kept.map((r) => r.role).sort();
      assert.deepEqual(roles, ['carrier', 'imd3l', 'imd3u', 'imd5l', 'imd5u', 'lower', 'upper']);
      assert.ok(kept.every((r) => r.kept && r.sessionId === ctx.session.id));
      const upper = kept.find((r) => r.role === 'upper')!;
      // Through the SDR's full-scale figure and the declared 50 dB path back to the transmitter: one
      // sideband of a 30 dBm PEP DSB signal is PEP - 6.02 dB (two equal tones, docs/references.md).
      assert.ok(Math.abs(upper.dbmDut - tx.sidebandDbm()) < 0.5, `upper ${upper.dbmDut} dBm`);
      assert.ok(Math.abs(upper.freqHz - (7.1e6 + 1000)) < 20);
      const stored = await service.invoke('readings', { sessionId: ctx.session.id, keptOnly: true });
      assert.equal(stored.filter((r) => r.note.startsWith('spectrum')).length, 7);
      const corr = connectionOf(ctx.store)
        .prepare(
          'SELECT c.calibration_json AS c FROM readings r JOIN corrections c ON c.id = r.correction_id WHERE r.id = ?',
        )
        .get(upper.id) as { c: string };
      assert.equal(JSON.parse(corr.c).kind, 'dbfs-offset');
      // The session's figures and the bundle both take readings corrected by a full-scale figure.
      await service.invoke('spectrumStop', {});
      const res = await service.invoke('sessionResults', { sessionId: ctx.session.id });
      assert.ok(JSON.stringify(res).includes('carrier'));
      const bundle = await service.invoke('exportBundle', {});
      assert.match(bundle.json, /dbfs-offset/);
      await service.invoke('importBundle', { text: bundle.json });
    } finally {
      await ctx.cleanup();
    }
  });

  it('reports a carrier buried in the noise as a bound, and takes the full-scale figure from a reference injection', async () => {
    // Leakage far below what 8-bit samples resolve: at the balance point the carrier is under the floor.
    const ctx = await serviceWithSession({ fast: false, source: 'sim:seed=5,leak=-120' });
    const { service } = ctx;
    try {
      await service.invoke('openSession', { sessionId: ctx.session.id });
      const live = service.session.bench as LiveBench;
      assert.ok(live.source instanceof SimSource);
      const tx = live.source.bench.tx;
      await service.invoke('spectrumStart', { source: 'iqsim' });
      const bal = tx.trueBalance();
      await service.invoke('setTrims', { trims: { A: bal.A, B: bal.B } });
      const f = await nextFrame((cb) => service.listen('spectrum', cb), 2);
      assert.ok(f.suppression);
      assert.equal(f.suppression.floorLimited, true);
      assert.equal(f.suppression.uDb, null);
      // The bound sits between the tones and the floor: tones at -12 dBFS, floor near -81 dBFS per bin.
      assert.ok(f.suppression.db > 55 && f.suppression.db < 75, `bound ${f.suppression.db} dB`);
      const carrier = f.components.find((c) => c.role === 'carrier')!;
      assert.equal(carrier.floorLimited, true);

      // A modulated transmitter at the input is no reference injection: its two tones stand level with each
      // other, so "the strongest line" would be a guess. Refused, saying why and what to do.
      const refused = await service.call('spectrumCalibrate', {
        injection: { generatorDbm: tx.sidebandDbm(), padDb: 50 },
      });
      assert.equal(refused.ok, false);
      assert.match(
        refused.ok ? '' : refused.message,
        /the injected line must stand alone, but .*within 40 dB of the strongest.*Calibrate with the generator alone/,
      );
      const kept = await service.invoke('spectrumKeep', { note: '' });
      const c = kept.find((r) => r.role === 'carrier')!;
      assert.equal(c.floorLimited, true);
    } finally {
      await ctx.cleanup();
    }
  });

  it('takes the full-scale figure from a lone injected line', async () => {
    // A generator alone at the carrier's place: the line at -20 dBFS, the tone positions 60 dB below it.
    const server = await IqSimServer.start({
      sampleRate: 256_000,
      generator: dsbGenerator({ carrierHz: 7.1e6, toneHz: 1000, suppressionDb: -60, toneDbfs: -80 }),
    });
    const ctx = await serviceWithSession({ fast: false });
    const { service } = ctx;
    try {
      await service.invoke('openSession', { sessionId: ctx.session.id });
      await service.invoke('spectrumStart', { source: `iq:127.0.0.1:${server.port}` });
      await nextFrame((cb) => service.listen('spectrum', cb), 2);
      // -10 dBm through a 30 dB pad is -40 dBm at the input, read at -20 dBFS: 0 dBFS is -20 dBm
      // (the definition of the full-scale figure, app/spectrum/dbfs.ts).
      const cal = await service.invoke('spectrumCalibrate', { injection: { generatorDbm: -10, padDb: 30 } });
      assert.equal(cal.from, 'injection');
      assert.ok(Math.abs(cal.dbmAtFullScale - -20) < 0.3, `${cal.dbmAtFullScale} dBm at 0 dBFS`);
    } finally {
      await service.invoke('spectrumStop', {}).catch(() => undefined);
      await ctx.cleanup();
      await server.close();
    }
  });

  it('reads an SDR sample server by iq:HOST:PORT, and says so when the server goes away', async () => {
    const server = await IqSimServer.start({
      sampleRate: 256_000,
      generator: dsbGenerator({ carrierHz: 7.1e6, toneHz: 1000, suppressionDb: 40, toneDbfs: -12 }),
    });
    const ctx = await serviceWithSession({ fast: false });
    const { service } = ctx;
    try {
      await service.invoke('openSession', { sessionId: ctx.session.id });
      const state = await service.invoke('spectrumStart', { source: `iq:127.0.0.1:${server.port}` });
      // No figure is known for a receiver of the user's own: levels stay in dBFS until one is set.
      assert.equal(state.calibration, null);
      const f = await nextFrame((cb) => service.listen('spectrum', cb), 1);
      // The generator's own setting (dsbGenerator: carrier below the mean of the two tones).
      assert.ok(f.suppression && Math.abs(f.suppression.db - 40) <= 0.5, `${f.suppression?.db} dB`);
      assert.equal(f.components.find((c) => c.role === 'upper')!.dbmDut, null);
      assert.equal(server.state.sampleRate, 256_000);
      assert.equal(server.state.centerHz, 7.1e6 - 25_600);
      await assert.rejects(service.invoke('spectrumKeep', {}), /no dBm at 0 dBFS/);
      await service.invoke('spectrumCalibrate', { dbmAtFullScale: -20, uDb: 1 });
      const f2 = await nextFrame((cb) => service.listen('spectrum', cb), 0);
      const up = f2.components.find((c) => c.role === 'upper')!;
      // dBFS + full-scale figure + the declared 50 dB path (30 dB coupler + 20 dB pad).
      assert.ok(Math.abs((up.dbmDut as number) - ((up.dbfs as number) - 20 + 50)) < 1e-9);

      const notice = new Promise<string>((resolve) => {
        const off = service.listen('notice', (n) => {
          if (!n.message.startsWith('spectrum:')) return;
          off();
          resolve(n.message);
        });
      });
      await server.close();
      assert.match(await notice, /closed the connection|failed/);
      assert.equal(service.spectrum.stream.state().running, false);
    } finally {
      await ctx.cleanup();
      await server.close().catch(() => undefined);
    }
  });

  it('refuses to start without a session, to keep before a trace, and a source that is not an SDR stream', async () => {
    const ctx = await serviceWithSession({ fast: false });
    try {
      await assert.rejects(ctx.service.invoke('spectrumStart', {}), /no session is open/);
      await ctx.service.invoke('openSession', { sessionId: ctx.session.id });
      await assert.rejects(ctx.service.invoke('spectrumKeep', {}), /no spectrum measured yet/);
      await assert.rejects(ctx.service.invoke('spectrumStart', { source: 'iq:nowhere' }), /iq:HOST:PORT/);
      // 1000 Hz tones are 4 bins of 250 Hz at FFT 1024: too close for the flat-top's main lobe.
      await assert.rejects(ctx.service.invoke('spectrumStart', { fftSize: 1024 }), /use a larger FFT/);
      await assert.rejects(ctx.service.invoke('spectrumStart', { fftSize: 1040 }), /multiple of 16/);
      assert.equal(ctx.service.spectrum.stream.state().running, false);
    } finally {
      await ctx.cleanup();
    }
  });
});
