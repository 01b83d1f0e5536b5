// From a session's kept readings to the fit and the next setting (app/nullfit/align), on synthetic benches
// invented for the test (nullfit-helpers), with readings shaped as the store returns them.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import {
  fitSession,
  guideSession,
  predictMap,
  trimStep,
  type AlignReading,
  type AlignTrim,
} from '../../app/nullfit/align';
import { fitNull2D } from '../../app/nullfit/fit2d';
import { BenchError } from '../../app/errors';
import { handMove, moveText } from '../../app/nullfit/format';
import { polar, reading1D, reading2D, rng, type Bench1D, type Bench2D } from './nullfit-helpers';

const TRIMS: AlignTrim[] = [
  { key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
  { key: 'B', label: 'Balance C', unit: '°', min: 0, max: 300, step: 0.5 },
];

let nextId = 1;
function reading(
  trims: Record<string, number>,
  dbmDut: number,
  extra: Partial<AlignReading> = {},
): AlignReading {
  return { id: nextId++, role: 'carrier', dbmDut, trims, floorLimited: false, overload: false, ...extra };
}

const BENCH1: Bench1D = { a: 0.02, x0: 4.37, cDbm: -82, floorDbm: null };
const BENCH2: Bench2D = {
  a0: 4.37,
  b0: 151,
  gA: polar(0.02, 0),
  gB: polar(0.0005, 70),
  cDbm: -82,
  floorDbm: null,
};

describe('fitSession()', () => {
  it('fits one trimmer from the readings taken where the other is held, and leaves out the rest', () => {
    const g = rng(3);
    const rs = [1, 2.5, 3.8, 4.2, 4.5, 5, 6.5, 8].map((x) =>
      reading({ A: x, B: 120 }, reading1D(BENCH1, x) + 0.1 * g.gauss()),
    );
    // Elsewhere (B at 150), near overload, another point, an unrelated role.
    rs.push(reading({ A: 4, B: 150 }, -30));
    rs.push(reading({ A: 4.4, B: 120 }, -10, { overload: true }));
    rs.push(reading({ A: 4.4, B: 120 }, -5, { role: 'upper' }));
    const f = fitSession(rs, TRIMS, { keys: ['A'], current: { A: 4, B: 120 } });
    assert.equal(f.kind, '1d');
    assert.deepEqual(f.held, { B: 120 });
    assert.equal(f.n, 8);
    assert.deepEqual(f.skipped, { overload: 1, elsewhere: 1 });
    assert.deepEqual(
      f.readingIds,
      rs.slice(0, 8).map((r) => r.id),
    );
    const [lo, hi] = f.ci.A;
    assert.ok(lo !== null && hi !== null && lo < 4.37 && 4.37 < hi, `[${lo}, ${hi}]`);
    // The curve is drawn densely where the null is sharp: a point within a tenth of the knee of x0.
    const knee = Math.sqrt(10 ** (-82 / 10)) / 0.02;
    assert.ok(f.curves.A.some((p) => Math.abs(p.x - f.best.A) < knee / 10));
    assert.ok(
      f.curves.A.every((p, i, a) => i === 0 || a[i - 1].x < p.x),
      'sorted by position',
    );
    // Plain data: JSON carries it unchanged (the web shell sends it as JSON).
    assert.deepEqual(JSON.parse(JSON.stringify(f)), f);
  });

  it('holds the others where asked (at), and enters floor-limited readings as censored', () => {
    const rs = [1, 2, 3, 4.37, 6, 7].map((x) =>
      reading({ A: x, B: 120 }, Math.max(reading1D(BENCH1, x), -70), {
        floorLimited: reading1D(BENCH1, x) < -70,
      }),
    );
    rs.push(...[1, 5, 9].map((x) => reading({ A: x, B: 200 }, -20)));
    const f = fitSession(rs, TRIMS, { keys: ['A'], at: { B: 120 }, current: { A: 4, B: 200 } });
    assert.equal(f.n, 6);
    assert.equal(f.nCensored, 1);
    assert.equal(f.cIsUpperBound, true, 'a null below the floor only bounds the depth');
  });

  it('fits two trimmers, and its map model predicts what the fit itself predicts', () => {
    const g = rng(5);
    const pts: [number, number][] = [];
    for (const a of [2, 4, 6]) for (const b of [60, 150, 240]) pts.push([a, b]);
    pts.push([4.4, 150], [4.3, 155], [4.37, 148]);
    const rs = pts.map(([a, b]) => reading({ A: a, B: b }, reading2D(BENCH2, a, b) + 0.1 * g.gauss()));
    const f = fitSession(rs, TRIMS, { keys: ['A', 'B'] });
    assert.equal(f.kind, '2d');
    assert.ok(f.map && f.ellipse);
    const direct = fitNull2D(rs.map((r) => ({ a: r.trims.A, b: r.trims.B, dbm: r.dbmDut })));
    for (const [a, b] of [
      [1, 30],
      [4.37, 151],
      [8, 280],
      [5, 100],
    ])
      assert.ok(Math.abs(predictMap(f.map!, a, b) - direct.predict(a, b)) < 1e-6, `at ${a}, ${b}`);
    assert.ok(Math.abs(f.best.A - 4.37) < 0.05 && Math.abs(f.best.B - 151) < 5, JSON.stringify(f.best));
    assert.equal(f.curves.A.length > 100 && f.curves.B.length > 100, true);
  });

  it('refuses an unknown trimmer, the same one twice, and too few readings, naming the field', () => {
    const code = (fn: () => unknown): [string, string | undefined] => {
      try {
        fn();
      } catch (e) {
        assert.ok(e instanceof BenchError);
        return [e.code, e.field];
      }
      return ['none', undefined];
    };
    assert.deepEqual(
      code(() => fitSession([], TRIMS, { keys: ['Q'] })),
      ['EINVAL', 'trims'],
    );
    assert.deepEqual(
      code(() => fitSession([], TRIMS, { keys: ['A', 'A'] })),
      ['EINVAL', 'trims'],
    );
    assert.deepEqual(
      code(() => fitSession([reading({ A: 1, B: 0 }, -20)], TRIMS, { keys: ['A'] })),
      ['EINVAL', 'readings'],
    );
    assert.deepEqual(
      code(() => trimStep({ key: 'A', label: 'R', unit: 'turns', min: 0, max: 1, step: 0 })),
      ['EINVAL', 'trims.A.step'],
    );
  });
});

describe('guideSession()', () => {
  it('says where to set the trimmers and how far to turn them, in each trimmer’s own unit and step', () => {
    const t = guideSession([], TRIMS, { keys: ['A', 'B'], current: { A: 2, B: 162 } });
    assert.equal(t.mode, 'survey');
    assert.deepEqual(t.next, { A: 5, B: 150 });
    // Turns are word units, degrees sit on the number; the steps give the digits (0.005 turn, 0.5°).
    assert.equal(t.setText, 'set A to 5.000 turns, B to 150.0°');
    // With the move a hand makes without reading the scale beside each (clockwise raises the scale, common
    // practice; a move back ends clockwise, so the trimmer's play is taken up from one side).
    assert.equal(
      t.turnText,
      'turn A +3.000 turns (3 turns clockwise), B −12.0° (about 12° anticlockwise, a little past, then back clockwise)',
    );
    assert.deepEqual(t.resolution, { A: 0.005, B: 0.5 });
    assert.deepEqual(t.moves, { A: 3, B: -12 });
    const here = guideSession([], TRIMS, { keys: ['A', 'B'], current: { A: 5, B: 162 } });
    assert.equal(
      here.turnText,
      'turn B −12.0° (about 12° anticlockwise, a little past, then back clockwise); leave A',
    );
    const unknown = guideSession([], TRIMS, { keys: ['A'] });
    assert.equal(unknown.turnText, '');
    assert.equal(unknown.moves, null);
  });

  it('follows a one-trimmer bench to its null and says stop with “leave”, the other trimmer held', () => {
    const g = rng(11);
    const rs: AlignReading[] = [];
    let t = guideSession(rs, TRIMS, { keys: ['A'], current: { A: 5, B: 120 } });
    for (let k = 0; k < 20 && !t.stop; k++) {
      rs.push(reading({ ...t.next }, reading1D(BENCH1, t.next.A) + 0.15 * g.gauss()));
      t = guideSession(rs, TRIMS, { keys: ['A'], current: t.next });
    }
    assert.equal(t.stop, true, t.reason);
    assert.equal(t.next.B, 120, 'the held trimmer stays');
    assert.match(t.setText, /^leave A at \d\.\d{3} turns$/);
    assert.ok(reading1D(BENCH1, t.next.A) < reading1D(BENCH1, BENCH1.x0) + 1);
    assert.ok(t.fit && t.fit.kind === '1d');
    assert.ok(
      t.predictedDbm !== null && t.band && t.band[0]! < t.predictedDbm && t.predictedDbm < t.band[1]!,
    );
    assert.equal(t.bestSeenDbm, Math.min(...rs.map((r) => r.dbmDut)));
  });

  it('names the session’s own trimmers in the reason', () => {
    const g = rng(2);
    const rs: AlignReading[] = [];
    let t = guideSession(rs, TRIMS, { keys: ['A', 'B'] });
    for (let k = 0; k < 8; k++) {
      rs.push(reading({ ...t.next }, reading2D(BENCH2, t.next.A, t.next.B) + 0.15 * g.gauss()));
      t = guideSession(rs, TRIMS, { keys: ['A', 'B'] });
    }
    const renamed = TRIMS.map((d, i) => ({ ...d, key: i === 0 ? 'R' : 'C' }));
    const rr = rs.map((r) => ({ ...r, trims: { R: r.trims.A, C: r.trims.B } }));
    const u = guideSession(rr, renamed, { keys: ['R', 'C'] });
    assert.match(u.reason, /\bR \d+\.\d{3}, C \d+\.\d\b/);
    assert.doesNotMatch(u.reason, /\bA \d/);
  });
});

describe('handMove()', () => {
  it('says a move as a hand makes it: fractions of a turn, or degrees for small moves', () => {
    assert.equal(handMove(0.25, 'turns'), 'a quarter turn clockwise');
    assert.equal(handMove(0.5, 'turn'), 'half a turn clockwise');
    assert.equal(handMove(1.25, 'turns'), 'one and a quarter turns clockwise');
    assert.equal(handMove(2, 'turns'), '2 turns clockwise');
    // 0.04 turn = 14.4°; below 1/16 turn an eighth-turn scale is too coarse, so degrees.
    assert.equal(handMove(0.04, 'turns'), 'about 14° clockwise');
    assert.equal(handMove(0.001, 'turns'), 'a touch (under 1°) clockwise');
    assert.equal(handMove(-90, '°'), 'a quarter turn anticlockwise, a little past, then back clockwise');
    // Units that are not an angle get no hand version.
    assert.equal(handMove(2, 'mm'), '');
    assert.equal(moveText(0.25, 0.005, 'turns'), '+0.250 turns (a quarter turn clockwise)');
    // Rounded to an eighth by more than a degree: said to be about that.
    assert.equal(
      handMove(-0.19, 'turns'),
      'about a quarter turn anticlockwise, a little past, then back clockwise',
    );
    assert.equal(handMove(3.295, 'turns'), 'about 3 and a quarter turns clockwise');
  });
});
