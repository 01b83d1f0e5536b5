// Property-based fuzzing (fast-check) of the service contract: every call in CALLS, fed payloads built from
// its own argument names with valid, awkward and hostile values (what a page, a script or a bad IPC message
// could send). Service.call never throws, answers { ok: true } or a clear failure, and the database never
// holds a bad row. Only the simulated bench is reachable here: no test traffic leaves this machine.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { join } from 'node:path';
import fc from 'fast-check';
import { z } from 'zod';
import { CALLS, POINT_ROLES, type CallName } from '../../app/api';
import { BUILTIN_TEMPLATES } from '../../app/serialtemplate';
import { BenchError } from '../../app/errors';
import { Service } from '../../main/service';
import { createSource } from '../../main/sources';
import { Store } from '../../main/store/store';
import { AWKWARD_NUMBERS, assertClearFailure, assertNoBadRows } from '../helpers/fuzz';
import { tempDir } from '../helpers/tmp';
import { connectionOf } from '../../main/store/connection';

const RUNS_PER_CALL = Number(process.env.FUZZ_API_RUNS ?? 25);
const CODES = ['EINVAL', 'ENOTFOUND', 'ETIMEOUT', 'EPROTO', 'EREJECTED', 'ENAVAIL', 'EUNSAFE', 'ECONFLICT'];

const ids: Record<string, string[]> = {};

/** Calls that act on the open session: the session is opened before they are fuzzed. */
const LIVE = new Set<string>(['tune', 'setTrims', 'keep', 'sweep', 'nullFit', 'nextTrial', 'planStart']);

const hostileText = fc.constantFrom(
  '',
  ' ',
  '\u0000',
  '__proto__',
  'constructor',
  '../../../etc/passwd',
  '<script>alert(1)</script>',
  "'; DROP TABLE readings; --",
  'x'.repeat(70),
  'x'.repeat(5000),
  'sim:seed=1,loss=-5',
  'net:127.0.0.1:1',
  'serial:/dev/null@9600',
  'preset:us-97.307d',
  '\uD800',
);

const anyValue: fc.Arbitrary<unknown> = fc.oneof(
  { weight: 3, arbitrary: fc.anything({ maxDepth: 2 }) },
  { weight: 2, arbitrary: hostileText },
  { weight: 2, arbitrary: fc.constantFrom(...AWKWARD_NUMBERS) },
  { weight: 1, arbitrary: fc.constantFrom(null, undefined, true, false, [], {}, [1, 2], { a: 1 }) },
);

const validReceiver = fc.record({
  name: fc.constantFrom('sim rx', 'Shack receiver'),
  source: fc.constantFrom('sim', 'sim:seed=4', 'sim:seed=2,loss=60', 'net:127.0.0.1:1', 'sim:bogus=1'),
  calibration: fc.constantFrom(null, { bands: [] }, 5),
  bandwidthHz: fc.constantFrom(500, 2400, -1),
  maxInputDbm: fc.constantFrom(10, 0, -20),
});

/** Values that a field of this name would plausibly get: real ids, valid shapes, near misses. */
function valuesFor(key: string): fc.Arbitrary<unknown> {
  const pick = (k: string) => fc.constantFrom(...(ids[k]?.length ? ids[k] : ['none']));
  const specific: Record<string, fc.Arbitrary<unknown>> = {
    designId: pick('design'),
    revisionId: pick('revision'),
    unitId: pick('unit'),
    sessionId: pick('session'),
    limitSetId: pick('limitSet'),
    limitSetIds: fc.array(fc.oneof(pick('limitSet'), fc.constant('preset:us-97.307d')), { maxLength: 3 }),
    role: fc.constantFrom(...POINT_ROLES),
    trims: fc.oneof(
      fc.record({ A: fc.double({ min: -2, max: 12, noNaN: true }) }, { requiredKeys: [] }),
      fc.constant([{ key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 }]),
      fc.constant([{ key: 'A', label: 'Balance R', unit: 'turns', min: 5, max: 1 }]),
    ),
    trim: fc.constantFrom('A', 'B', 'Z'),
    from: fc.double({ min: -1, max: 11, noNaN: true }),
    to: fc.double({ min: -1, max: 11, noNaN: true }),
    steps: fc.integer({ min: 0, max: 6 }),
    path: fc.constantFrom(
      [{ kind: 'pad', db: 40 }],
      [
        { kind: 'coupler', couplingDb: 30 },
        { kind: 'pad', db: 20 },
      ],
      [{ kind: 'pad', db: -3 }],
      [],
      [{ kind: 'wormhole' }],
    ),
    receiver: validReceiver,
    carrierHz: fc.constantFrom(7.1e6, 14.2e6, 0, -1),
    toneHz: fc.constantFrom(1000, 700, 0),
    txPepDbm: fc.constantFrom(30, 40, 70, -30),
    name: fc.oneof(fc.constantFrom('Kestrel 20', 'Wren 30', 'B', ' '), fc.string({ maxLength: 8 })),
    serial: fc.oneof(fc.constantFrom('KS-1', 'KS-2'), fc.string({ maxLength: 8 })),
    emission: fc.constantFrom('dsb', 'usb', 'lsb', 'am'),
    reference: fc.constantFrom('tone', 'pep', 'unbalanced', 'carrier'),
    note: fc.string({ maxLength: 20 }),
    waitSettled: fc.boolean(),
    keptOnly: fc.boolean(),
    limit: fc.constantFrom(1, 10, 0, 1e7),
    text: fc.constantFrom('', '{}', '{"format":"nullbench-bundle","version":1}', 'not json', '[]'),
    set: fc.constantFrom(
      { name: 'Fuzz limits', source: 'ours', rules: [{ metric: 'balance', maxDb: 1 }] },
      { name: '', rules: [] },
      null,
    ),
    uploadId: fc.constantFrom('abcdefgh', 'short', 'abcdefgh-12345678'),
    receiverId: pick('receiver'),
    planId: pick('plan'),
    id: fc.oneof(pick('receiver'), pick('plan')),
    notes: fc.string({ maxLength: 12 }),
    changes: fc.string({ maxLength: 12 }),
    builder: fc.string({ maxLength: 12 }),
    buildDate: fc.constantFrom('2026-05-01', '', 'yesterday'),
    operator: fc.string({ maxLength: 12 }),
    freqHz: fc.constantFrom(7.1e6, 0, -5, 1e12),
    count: fc.constantFrom(1, 3, 0, 500),
    ok: fc.boolean(),
    save: fc.boolean(),
    replace: fc.boolean(),
    part: fc.nat(3),
    parts: fc.integer({ min: 0, max: 3 }),
  };
  return fc.oneof({ weight: 3, arbitrary: specific[key] ?? anyValue }, { weight: 1, arbitrary: anyValue });
}

/** A valid payload per call (where one needs more than random values to build), from the ids known now. */
function examples(): Partial<Record<CallName, () => Record<string, unknown>>> {
  const first = (k: string) => ids[k]?.[ids[k].length - 1] ?? 'none';
  return {
    createUnit: () => ({
      revisionId: first('revision'),
      serial: `KS-${Math.random().toString(36).slice(2, 8)}`,
    }),
    createSession: () => ({ ...sessionSetup(), unitId: first('unit') }),
    openSession: () => ({ sessionId: ids.session[0] }),
    repeatSession: () => ({ sessionId: ids.session[0] }),
    continueSession: () => ({ sessionId: ids.session[0] }),
    endSessionById: () => ({ sessionId: ids.session[ids.session.length - 1] }),
    tune: () => ({ role: 'upper' }),
    setTrims: () => ({ trims: { A: 4.5 } }),
    keep: () => ({ note: 'fuzz', waitSettled: false }),
    sweep: () => ({ trim: 'A', from: 2, to: 6, steps: 3 }),
    saveTemplate: () => ({ template: { ...BUILTIN_TEMPLATES[0], name: 'fuzz-copy' } }),
    deleteTemplate: () => ({ name: 'fuzz-copy' }),
    saveReceiver: () => ({
      receiver: { name: 'Fuzz sim', source: 'sim:seed=6', bandwidthHz: 500, maxInputDbm: 10 },
    }),
    deleteReceiver: () => ({ id: first('receiver') }),
    calibrationRead: () => ({ receiverId: ids.receiver[0], freqHz: 7.1e6, count: 2 }),
    fitCalibration: () => ({
      receiverId: ids.receiver[0],
      injections: [
        { freqHz: 7.1e6, generatorDbm: -30, padDb: 40, raw: -10 },
        { freqHz: 7.1e6, generatorDbm: -10, padDb: 40, raw: 10 },
      ],
    }),
    planStart: () => ({
      sessionId: ids.session[0],
      plan: { points: ['carrier', 'upper'], average: 2, settleMs: 0, settleTimeoutMs: 500 },
    }),
    planCancel: () => ({ planId: first('plan') }),
    planResume: () => ({ planId: first('plan') }),
    planContinue: () => ({ planId: first('plan') }),
    getPlan: () => ({ planId: first('plan') }),
    nullFit: () => ({ sessionId: ids.session[0] }),
    nextTrial: () => ({ sessionId: ids.session[0] }),
    importBundle: () => ({ text: bundleText }),
    importBundlePart: () => ({ uploadId: 'fuzzupload', part: 0, parts: 1, text: bundleText }),
  };
}

let bundleText = '';

function sessionSetup() {
  return {
    receiver: { name: 'sim rx', source: 'sim:seed=3', calibration: null, bandwidthHz: 500, maxInputDbm: 10 },
    path: [
      { kind: 'coupler', couplingDb: 30 },
      { kind: 'pad', db: 20 },
    ],
    carrierHz: 7.1e6,
    toneHz: 1000,
    txPepDbm: 30,
    trims: [{ key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 }],
  };
}

/** A valid example with one field changed to a plausible or hostile value, or removed, or left alone. */
function editedExample(make: () => Record<string, unknown>): fc.Arbitrary<unknown> {
  return fc.tuple(fc.nat(), fc.constantFrom(0, 0, 1, 2, 3)).chain(([which, how]) => {
    const base = make();
    const keys = Object.keys(base);
    const key = keys[which % keys.length];
    if (how === 0) return fc.constant(base);
    if (how === 1) {
      const { [key]: _gone, ...rest } = base;
      return fc.constant(rest);
    }
    return valuesFor(key).map((v) => ({ ...base, [key]: v }));
  });
}

/** Payloads for one call: its own argument names with plausible or hostile values, or anything at all. */
function payloadFor(name: CallName): fc.Arbitrary<unknown> {
  const example = examples()[name];
  if (example)
    return fc.oneof(
      { weight: 3, arbitrary: editedExample(example) },
      { weight: 2, arbitrary: randomPayload(name) },
    );
  return randomPayload(name);
}

function randomPayload(name: CallName): fc.Arbitrary<unknown> {
  const schema = CALLS[name] as z.ZodType;
  const keys = schema instanceof z.ZodObject ? Object.keys(schema.shape) : [];
  const shaped = fc.record(Object.fromEntries(keys.map((k) => [k, valuesFor(k)])), { requiredKeys: [] });
  return fc.oneof(
    { weight: 1, arbitrary: anyValue },
    { weight: 5, arbitrary: shaped },
    {
      weight: 1,
      arbitrary: fc
        .tuple(shaped, fc.dictionary(fc.string({ maxLength: 6 }), anyValue, { maxKeys: 2 }))
        .map(([a, b]) => ({
          ...b,
          ...(a as object),
        })),
    },
  );
}

describe('fuzz: the service contract', { timeout: 600_000 }, () => {
  let tmp: ReturnType<typeof tempDir>;
  let store: Store;
  let service: Service;

  before(async () => {
    tmp = tempDir();
    store = new Store(join(tmp.dir, 'api.db'));
    service = new Service({
      store,
      mode: 'web',
      // Only the simulated bench, on its virtual clock: nothing here may reach a real receiver or the network.
      createSource: (spec) => {
        if (!spec.trim().startsWith('sim'))
          throw new BenchError('ENAVAIL', `the fuzz test reaches no real receiver ("${spec}")`, 'source');
        return createSource(`${spec}${spec.includes(':') ? ',' : ':'}fast`);
      },
      pdf: async () => new Uint8Array(Buffer.from('%PDF-1.4 fuzz')),
      live: { settleTimeoutMs: 300 },
    });
    const d = await service.invoke('createDesign', { name: 'Kestrel 20' });
    const r = await service.invoke('createRevision', { designId: d.id, name: 'B' });
    const u = await service.invoke('createUnit', { revisionId: r.id, serial: 'KS-1' });
    const s = await service.invoke('createSession', {
      unitId: u.id,
      receiver: {
        name: 'sim rx',
        source: 'sim:seed=3',
        calibration: null,
        bandwidthHz: 500,
        maxInputDbm: 10,
      },
      path: [
        { kind: 'coupler', couplingDb: 30 },
        { kind: 'pad', db: 20 },
      ],
      carrierHz: 7.1e6,
      toneHz: 1000,
      txPepDbm: 30,
      trims: [{ key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 }],
    });
    ids.design = [d.id];
    ids.revision = [r.id];
    ids.unit = [u.id];
    ids.session = [s.id];
    ids.limitSet = ['preset:us-97.307d'];
    const rx = await service.invoke('saveReceiver', {
      receiver: { name: 'Bench sim', source: 'sim:seed=6', bandwidthHz: 500, maxInputDbm: 10 },
    });
    ids.receiver = [rx.id];
    ids.plan = [];
    bundleText = (await service.invoke('exportBundle', {})).json;
  });

  after(async () => {
    await service.close();
    store.close();
    tmp.cleanup();
  });

  const names = Object.keys(CALLS) as CallName[];
  it(`covers every call of the contract (${names.length})`, () => {
    assert.ok(names.length >= 15);
  });

  for (const name of names) {
    it(`${name}: any payload is answered, ok or with a clear failure; no bad row`, async () => {
      let ok = 0;
      if (LIVE.has(name)) await service.invoke('openSession', { sessionId: ids.session[0] });
      // Earlier fuzzing may have deleted them: these calls get a profile of their own.
      if (name === 'calibrationRead' || name === 'fitCalibration') {
        await service.invoke('closeSession', {});
        const rx = await service.invoke('saveReceiver', {
          receiver: { name: `Bench sim ${name}`, source: 'sim:seed=6', bandwidthHz: 500, maxInputDbm: 10 },
        });
        ids.receiver = [rx.id];
      }
      await fc.assert(
        fc.asyncProperty(payloadFor(name), async (payload) => {
          let r: Awaited<ReturnType<Service['call']>>;
          try {
            r = await service.call(name, payload);
          } catch (e) {
            assert.fail(`${name} threw instead of answering: ${(e as Error).stack}`);
          }
          const what = `${name}(${safeJson(payload)})`;
          if (r.ok) {
            ok++;
            remember(name, r.value);
            return;
          }
          if (process.env.FUZZ_API_DEBUG === name)
            process.stdout.write(`# ${what} -> ${r.code} ${r.message}\n`);
          assertClearFailure(r, CODES, what);
        }),
        { numRuns: RUNS_PER_CALL },
      );
      assertNoBadRows(connectionOf(store), name);
      // Every call was reached with a payload it accepted at least once, or is one that needs state a
      // random payload rarely builds (noted here so a call never silently goes unexercised).
      if (ok === 0)
        process.stdout.write(`# ${name}: no random payload was accepted in ${RUNS_PER_CALL} runs\n`);
    });
  }
});

function safeJson(v: unknown): string {
  try {
    return (JSON.stringify(v) ?? String(v)).slice(0, 300);
  } catch {
    return String(v);
  }
}

/** New records become ids later payloads can use. */
function remember(name: CallName, value: unknown): void {
  const v = value as { id?: string } | null;
  if (!v || typeof v !== 'object' || typeof v.id !== 'string') return;
  const kind: Partial<Record<CallName, string>> = {
    createDesign: 'design',
    createRevision: 'revision',
    createUnit: 'unit',
    createSession: 'session',
    saveLimitSet: 'limitSet',
    saveReceiver: 'receiver',
    planStart: 'plan',
  };
  const k = kind[name];
  if (k) ids[k] = [...(ids[k] ?? []), v.id];
}
