// Runs in Node. `nullbench log`: read a receiver (or the simulated bench) at a set rate into a session of the
// database, printing each reading as one JSON line only after it has been committed to disk. A line on
// stdout is a promise: that reading, with that id, is in the `readings` table, even if the power fails next.
import { BenchError } from '../../../app/errors';
import { parsePathSpec } from '../../../app/path';
import { POINT_ROLES, type LiveReading, type PointRole, type Session } from '../../../app/api';
import { MAX_RATE_HZ, pacedSource } from '../../live/pace';
import { defaultDbPath } from '../../paths';
import { Service } from '../../service';
import { createSource, SOURCES } from '../../sources';
import { Store } from '../../store/store';
import {
  joinNegativeNumbers,
  numberOption,
  pepOption,
  parseOptions,
  reportError,
  type Command,
  type Io,
  machineJson,
} from './command';

const DEFAULT_DESIGN = 'Bench log';
const DEFAULT_REVISION = 'log';
const DEFAULT_UNIT = 'log';

/** Options that describe a new session; continuing one with --session takes them from the stored session. */
const SETUP_OPTIONS = [
  'source',
  'unit',
  'design',
  'revision',
  'path',
  'carrier-hz',
  'tone-hz',
  'tx-pep-dbm',
  'pep-w',
  'max-input-dbm',
  'bandwidth-hz',
  'operator',
  'notes',
] as const;

const NUMBER_OPTIONS = [
  '--tx-pep-dbm',
  '--max-input-dbm',
  '--carrier-hz',
  '--tone-hz',
  '--rate-hz',
  '--for-s',
];

export const logCommand: Command = {
  name: 'log',
  usage: `nullbench log --tx-pep-dbm P --max-input-dbm M [--source SPEC] [--rate-hz R] [--for-s S] [options]
nullbench log --session ID [--continue] [--rate-hz R] [--for-s S]

Reads the receiver R times a second and stores every reading in a session. Each reading is printed as one
JSON line (id, session_id, t, freq_hz, role, raw, dbm_rx, dbm_dut, u_db, settled, floor_limited, overload)
only after it is committed: id is its row in the readings table. Ctrl+C (or --for-s) stops and closes the
session; if the computer crashes instead, every printed reading is in the database and the session can be
continued with --session.

Where the readings go:
  --db FILE            database (default: ${defaultDbPath()})
  --session ID         continue an open session (its receiver, path and trimmers); no set-up options then
  --continue           with --session: take up a session that has ended (refused without it); its notes
                       record when it had ended and when it was continued
  --unit SERIAL        the unit being measured (default "${DEFAULT_UNIT}"); created if new, under:
  --design NAME        its design (default "${DEFAULT_DESIGN}"), created if new
  --revision NAME      its board revision (default "${DEFAULT_REVISION}"), created if new
Set-up of a new session (the receiver safety check runs before anything is read):
  --source SPEC        ${SOURCES.map((s) => s.syntax).join(' | ')} (default sim)
  --tx-pep-dbm P       the transmitter's peak envelope power, dBm (or --pep-w W, in watts; one is required)
  --max-input-dbm M    the receiver's rated maximum input, dBm (required)
  --path ELEMENTS      signal path from the transmitter to the receiver, e.g. coupler:30,pad:20
  --carrier-hz F       the carrier's absolute frequency, Hz (default 7100000)
  --tone-hz F          audio tone offset of the sidebands (default 1000)
  --bandwidth-hz B     receiver measurement bandwidth (default 500)
  --operator NAME, --notes TEXT
Reading:
  --role ROLE          point to read: ${POINT_ROLES.join(', ')} (default carrier)
  --rate-hz R          readings per second, at most ${MAX_RATE_HZ} (default 10); a slower receiver sets its own pace
  --for-s S            stop after S seconds (default: until Ctrl+C)
Refused when the receiver input at the declared PEP through the path would exceed its rated maximum.`,

  async run(argv, io) {
    try {
      const { values } = parseOptions(joinNegativeNumbers(argv, NUMBER_OPTIONS), {
        db: { type: 'string' },
        session: { type: 'string' },
        unit: { type: 'string' },
        design: { type: 'string' },
        revision: { type: 'string' },
        source: { type: 'string' },
        path: { type: 'string' },
        'carrier-hz': { type: 'string' },
        'tone-hz': { type: 'string' },
        'tx-pep-dbm': { type: 'string' },
        'pep-w': { type: 'string' },
        'max-input-dbm': { type: 'string' },
        'bandwidth-hz': { type: 'string' },
        operator: { type: 'string' },
        notes: { type: 'string' },
        role: { type: 'string', default: 'carrier' },
        'rate-hz': { type: 'string' },
        'for-s': { type: 'string' },
        continue: { type: 'boolean', default: false },
        help: { type: 'boolean', short: 'h', default: false },
      });
      if (values.help) {
        io.out(this.usage + '\n');
        return 0;
      }
      if (values.continue && values.session === undefined)
        throw new BenchError(
          'EINVAL',
          'only with --session (the ended session to take up again)',
          '--continue',
        );
      const rateHz = numberOption(values['rate-hz'], 'rate-hz', 10);
      if (!(rateHz > 0 && rateHz <= MAX_RATE_HZ))
        throw new BenchError(
          'EINVAL',
          `must be above 0 and at most ${MAX_RATE_HZ}, got ${rateHz}`,
          '--rate-hz',
        );
      const forS = values['for-s'] === undefined ? null : numberOption(values['for-s'], 'for-s');
      if (forS !== null && !(forS > 0 && forS <= 1e7))
        throw new BenchError('EINVAL', `must be above 0 s and at most 10000000 s, got ${forS}`, '--for-s');
      const role = values.role as PointRole;
      if (!(POINT_ROLES as readonly string[]).includes(role))
        throw new BenchError(
          'EINVAL',
          `unknown point "${role}"; use one of ${POINT_ROLES.join(', ')}`,
          '--role',
        );
      if (values.session !== undefined) {
        const given = SETUP_OPTIONS.filter((k) => values[k] !== undefined);
        if (given.length)
          throw new BenchError(
            'EINVAL',
            `--session continues a stored session with its own set-up; drop ${given.map((k) => `--${k}`).join(', ')}`,
            `--${given[0]}`,
          );
      }

      const store = new Store(values.db ?? defaultDbPath(), {
        onBackup: (p) => io.err(`The database was upgraded; its earlier version is kept at ${p}\n`),
      });
      const service = new Service({
        store,
        mode: 'cli',
        createSource: (spec, env) => pacedSource(createSource(spec, env), rateHz),
      });
      try {
        const session =
          values.session !== undefined
            ? continuable(store, values.session, values.continue)
            : await newSession(service, store, values);
        return await logInto(service, store, session, role, forS, io);
      } finally {
        await service.close();
        store.close();
      }
    } catch (e) {
      return reportError(e, io);
    }
  },
};

/**
 * The stored session to log into. One that has ended is refused unless `takeUp` says, knowingly, to
 * continue it (its notes then record both sittings).
 */
function continuable(store: Store, id: string, takeUp: boolean): Session {
  let s: Session;
  try {
    s = store.getSession(id);
  } catch (e) {
    if (e instanceof BenchError && e.code === 'ENOTFOUND')
      throw new BenchError('ENOTFOUND', `no session with id "${id}" in ${store.file}`, '--session');
    throw e;
  }
  if (s.endedAt !== null) {
    if (!takeUp)
      throw new BenchError(
        'ECONFLICT',
        `session ${id} ended at ${s.endedAt}; log into a new session instead, or add --continue to take this one up again (its notes will say so)`,
        '--session',
      );
    store.continueSession(id);
    return store.getSession(id);
  }
  return s;
}

type Values = Partial<Record<(typeof SETUP_OPTIONS)[number], string>>;

/**
 * The design, revision and serial a new session is for: an existing unit keeps its own design and revision
 * (naming others is a conflict); a new one takes the names given, or the defaults.
 */
function unitNames(store: Store, v: Values): { design: string; revision: string; serial: string } {
  const serial = (v.unit ?? DEFAULT_UNIT).trim();
  const existing = store.findUnitBySerial(serial);
  if (!existing)
    return {
      design: (v.design ?? DEFAULT_DESIGN).trim(),
      revision: (v.revision ?? DEFAULT_REVISION).trim(),
      serial,
    };
  const rev = store.getRevision(existing.revisionId);
  const design = store.getDesign(rev.designId);
  if ((v.design ?? design.name) !== design.name || (v.revision ?? rev.name) !== rev.name)
    throw new BenchError(
      'ECONFLICT',
      `unit "${serial}" already exists as revision "${rev.name}" of "${design.name}"`,
      '--unit',
    );
  return { design: design.name, revision: rev.name, serial };
}

async function newSession(service: Service, store: Store, v: Values): Promise<Session> {
  const txPepDbm = pepOption(v);
  const maxInputDbm = numberOption(v['max-input-dbm'], 'max-input-dbm');
  const path = parsePathSpec(v.path ?? '');
  const source = (v.source ?? 'sim').trim();
  // Checks the source spec and its options before anything is written.
  createSource(source);
  const setup = {
    receiver: {
      name: `receiver ${source}`,
      source,
      calibration: null,
      bandwidthHz: numberOption(v['bandwidth-hz'], 'bandwidth-hz', 500),
      maxInputDbm,
    },
    path,
    carrierHz: numberOption(v['carrier-hz'], 'carrier-hz', 7_100_000),
    toneHz: numberOption(v['tone-hz'], 'tone-hz', 1000),
    txPepDbm,
    operator: v.operator ?? '',
    notes: v.notes ?? '',
    trims: [
      { key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
      { key: 'B', label: 'Balance C', unit: 'turns', min: 0, max: 10 },
    ],
  };
  // One call: the service checks everything (the receiver safety check too) before a design, revision,
  // unit or session is written, so a refused set-up leaves the database as it was.
  try {
    return await service.invoke('startSession', { ...setup, ...unitNames(store, v) });
  } catch (e) {
    if (e instanceof BenchError && e.code === 'EUNSAFE') throw new BenchError('EUNSAFE', e.message, '--path');
    if (e instanceof BenchError) throw optionError(e);
    throw e;
  }
}

/** Names the command-line option behind a session field ("carrierHz" -> "--carrier-hz"). */
function optionError(e: BenchError): BenchError {
  const map: Record<string, string> = {
    carrierHz: '--carrier-hz',
    toneHz: '--tone-hz',
    txPepDbm: '--tx-pep-dbm',
    'receiver.maxInputDbm': '--max-input-dbm',
    'receiver.bandwidthHz': '--bandwidth-hz',
    'receiver.source': '--source',
    operator: '--operator',
    notes: '--notes',
  };
  const field = e.field ?? '';
  return new BenchError(e.code, e.message, map[field] ?? field);
}

/** Reads until --for-s runs out, a signal arrives, or the source fails in a way retrying cannot heal. */
async function logInto(
  service: Service,
  store: Store,
  session: Session,
  role: PointRole,
  forS: number | null,
  io: Io,
): Promise<number> {
  let count = 0;
  let fatal: string | null = null;
  let lastNotice = '';
  let stop: () => void = () => undefined;
  const stopped = new Promise<void>((resolve) => (stop = resolve));
  // The 'reading' event fires after the reading's transaction has committed (synchronous=FULL).
  const offReading = service.listen('reading', (r: LiveReading) => {
    count++;
    io.out(
      machineJson({
        id: r.id,
        session_id: r.sessionId,
        t: r.t,
        freq_hz: r.freqHz,
        role: r.role,
        raw: r.raw,
        dbm_rx: r.dbmRx,
        dbm_dut: r.dbmDut,
        u_db: r.uDb,
        settled: r.settled,
        floor_limited: r.floorLimited,
        overload: r.overload,
      }) + '\n',
    );
  });
  const offNotice = service.listen('notice', (n) => {
    const line = `${n.level}${n.code ? ` (${n.code})` : ''}: ${n.message}`;
    // A link that keeps failing says so once, not once per retry.
    if (line !== lastNotice) io.err(line + '\n');
    lastNotice = line;
    if (n.level === 'error' && n.code === 'EINVAL') {
      fatal = n.message;
      stop();
    }
  });
  // The bench stopped by itself (a refusal, or a store that cannot write): status says so once it halts.
  let opened = false;
  const offStatus = service.listen('status', (st) => {
    if (!opened || st.live || st.activeSessionId !== session.id) return;
    fatal = st.lastError ?? 'reading stopped';
    stop();
  });
  const onSignal = () => stop();
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  const timer = forS === null ? null : setTimeout(stop, forS * 1000);
  try {
    await service.invoke('openSession', { sessionId: session.id });
    opened = true;
    if (role !== 'carrier') await service.invoke('tune', { role });
    io.err(
      `logging session ${session.id} into ${store.file}${forS === null ? ' (Ctrl+C stops)' : ` for ${forS} s`}\n`,
    );
    await stopped;
  } finally {
    if (timer) clearTimeout(timer);
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    opened = false;
    await service.invoke('closeSession', {});
    offReading();
    offNotice();
    offStatus();
  }
  const stored = `stored ${count} readings in session ${session.id} of ${store.file}`;
  if (fatal !== null) {
    // Left open, so it can be continued once the cause is dealt with.
    // The reason was just printed as the last notice: the closing lines say what is stored and what next.
    const why = lastNotice.endsWith(fatal) ? 'stopped (see above)' : `stopped: ${fatal}`;
    io.err(
      `${stored}; ${why}. The session stays open: continue it with ` +
        `nullbench log --db ${store.file} --session ${session.id}\n`,
    );
    return 1;
  }
  try {
    store.endSession(session.id);
  } catch (e) {
    io.err(
      `${stored}, but its end could not be recorded (${(e as Error).message}); it stays open: continue or ` +
        `end it with nullbench log --db ${store.file} --session ${session.id}\n`,
    );
    return 1;
  }
  io.err(`${stored}\n`);
  return 0;
}
