import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import type { PointRole } from '../../app/api';
import { analyseSession, type PointLevel } from '../../app/analysis';
import { compareRevisions, quantile, type RevisionEntry } from '../../app/compare';
import { pythonJson } from '../helpers/python';

let t = 0;
function pt(role: PointRole, dbm: number): PointLevel {
  return {
    role,
    t: (t += 1),
    freqHz: 7.1e6,
    dbm,
    uDb: 0.6,
    uCalDb: 0.3,
    uPathDb: 0.4,
    floorLimited: false,
    overload: false,
  };
}

function revision(name: string, carriers: number[], imd = -8, imbalanceStep = 0): RevisionEntry {
  return {
    revisionId: `id-${name}`,
    name,
    changes: '',
    createdAt: `2026-0${name.length}-01`,
    unitCount: carriers.length,
    sessions: carriers.map((c, i) => ({
      unitId: `${name}-u${i}`,
      serial: `${name}-${i}`,
      sessionId: `${name}-s${i}`,
      startedAt: `2026-01-0${i + 1}`,
      figures: analyseSession([
        pt('upper', 24),
        pt('lower', 24 - i * imbalanceStep),
        pt('carrier', c),
        pt('imd3u', imd),
        pt('imd3l', imd - 1),
      ]),
    })),
  };
}

describe('compare.quantile()', () => {
  it('matches numpy.percentile (linear interpolation) on uneven samples', () => {
    const samples = [[3], [1, 2], [5, 1, 4], [40.5, 52.1, 49.9, 58.3, 44], [-1, -7, 3, 3, 12, 0.5, 8]];
    const qs = [0, 0.1, 0.25, 0.5, 0.75, 0.9, 1];
    // Reference: numpy.percentile, default method "linear" (Debian python3-numpy).
    const ref = pythonJson<number[][]>(
      `import json,sys,numpy as np\nd=json.loads(sys.argv[1]);print(json.dumps([[float(np.percentile(s,q*100)) for q in d['q']] for s in d['s']]))`,
      undefined,
      [JSON.stringify({ s: samples, q: qs })],
    );
    samples.forEach((s, i) => {
      const sorted = [...s].sort((a, b) => a - b);
      qs.forEach((q, j) =>
        assert.ok(Math.abs(quantile(sorted, q) - ref[i][j]) < 1e-12, `sample ${i} q ${q}`),
      );
    });
  });
});

describe('compare.compareRevisions()', () => {
  it('summarises each revision and calls a deeper carrier null "better" beyond the uncertainty', () => {
    const c = compareRevisions([revision('R1', [-26, -28, -30]), revision('R2', [-41, -44, -43])], 'tone');
    const [r1, r2] = c.revisions;
    assert.equal(r1.metrics.carrier!.n, 3);
    assert.equal(r1.metrics.carrier!.min, 50);
    assert.equal(r1.metrics.carrier!.median, 52);
    assert.equal(r2.metrics.carrier!.median, 67);
    assert.equal(r2.metrics.carrier!.max, 68);
    const carrier = c.changes.find((x) => x.metric === 'carrier')!;
    assert.equal(carrier.kind, 'better');
    assert.equal(carrier.betterByDb, 15);
    assert.equal(r1.metrics.opposite, null, 'DSB has no opposite-sideband figure');
  });

  it('flags a regression when the later revision is worse, and "same" within the uncertainty', () => {
    const c = compareRevisions(
      [revision('R1', [-41, -44, -43], -8), revision('R2', [-26, -28, -30], -8.5)],
      'pep',
    );
    const carrier = c.changes.find((x) => x.metric === 'carrier')!;
    assert.equal(carrier.kind, 'worse');
    assert.equal(carrier.betterByDb, -15);
    const imd = c.changes.find((x) => x.metric === 'imd3')!;
    assert.equal(imd.kind, 'same', `0.5 dB is inside ${imd.thresholdDb.toFixed(2)} dB`);
    assert.ok(imd.thresholdDb >= 1);
  });

  it('treats a smaller sideband imbalance as better', () => {
    const c = compareRevisions([revision('R1', [-30, -30, -30], -8, 0.2), revision('R2', [-30])], 'tone');
    const b = c.changes.find((x) => x.metric === 'balance')!;
    // R1 imbalance 0, 0.2, 0.4 (median 0.2); R2 0: better by 0.2 dB, inside the threshold.
    assert.ok(Math.abs(b.betterByDb - 0.2) < 1e-9);
    assert.equal(b.kind, 'same');
  });
});
