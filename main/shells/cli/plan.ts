// Runs in Node. `nullbench plan`: run a frequency-stepped plan on a session (retune, settle, average, store),
// with progress on stderr, manual steps asked on the terminal, Ctrl+C to cancel (resumable), and the result
// table in dB against the chosen reference.
import { POINT_ROLES, ROLE_LABELS, type PlanView } from '../../../app/api';
import { BenchError } from '../../../app/errors';
import { parsePathSpec } from '../../../app/path';
import { DEFAULT_PLAN_POINTS, parsePointList } from '../../../app/plan';
import { defaultDbPath } from '../../paths';
import { Service } from '../../service';
import { Store } from '../../store/store';
import { prompter } from './ask';
import {
  numberOption,
  parseOptions,
  pepOption,
  reportError,
  type Command,
  type Io,
  machineJson,
} from './command';

const USAGE = `nullbench plan run (--session ID | --unit SERIAL (--receiver NAME | --source SPEC [--template T]
                   --max-input-dbm M) --path ELEMENTS (--pep-w W | --tx-pep-dbm P) --carrier-hz F --tone-hz T)
                   [--points LIST] [--average N] [--settle-ms MS] [--settle-timeout-ms MS]
                   [--reference tone|pep|unbalanced] [--json] [--db FILE]
nullbench plan resume PLAN_ID [--json] [--db FILE]
nullbench plan show PLAN_ID [--json] [--db FILE]
nullbench plan list [--session ID] [--json] [--db FILE]

A plan steps the receiver through points relative to the carrier; at each it waits for the meter to settle,
averages N readings (each stored as a reading of the session) and stores the point's result. The table shows
each point in dBm at the transmitter and in dB against the reference.
Points: ${POINT_ROLES.join(', ')} (default ${DEFAULT_PLAN_POINTS.join(',')}).
"reference" is the carrier with the modulator deliberately unbalanced; on a real receiver you are asked to
do that (and to undo it) on the terminal. Ctrl+C cancels; "plan resume" finishes the remaining points.
Before it starts, the plan is refused when the declared PEP through the path would exceed the receiver's
rated maximum input (with "reference", 3.52 dB more: the carrier adds to the envelope).
Options:
  --session ID          an existing session (it is opened and read live)
  --unit SERIAL         or a new session for this unit (it must exist), with:
  --receiver NAME       a stored receiver profile, or --source SPEC (and --template T for serial)
  --max-input-dbm M     the receiver's rated maximum input (with --source)
  --path ELEMENTS       e.g. coupler:30,pad:20
  --pep-w W             the transmitter's peak envelope power, W (or --tx-pep-dbm P, in dBm)
  --carrier-hz F        the carrier's absolute frequency, Hz; --tone-hz T: the audio tone, Hz
  --average N           readings averaged per point (default 5)
  --settle-ms MS        least wait after retuning (default 1500: three 500 ms R.1 meter decay constants)
  --settle-timeout-ms   average anyway after this long without steady readings (default 10000)
  --reference KIND      tone (default), pep or unbalanced
  --json                the plan with its result table as one JSON object
  --db FILE             database (default: ${defaultDbPath()})`;

function fmt(x: number | null, d = 1): string {
  return x === null ? '—' : `${x < 0 ? '−' : ''}${Math.abs(x).toFixed(d)}`;
}

export function planTableText(v: PlanView): string {
  const head =
    `plan ${v.id}  ${v.state}${v.message ? ` (${v.message})` : ''}\n` +
    `reference: ${v.reference ? `${v.reference.label}, ${fmt(v.reference.dbm, 2)} dBm` : `none yet (${v.referenceReason})`}\n` +
    `point                            freq (MHz)   dBm at TX   ±u (k=2)   dB rel. ref   ±u (k=2)   n\n`;
  const rows = v.rows.map((r) => {
    const p = v.points.find((x) => x.idx === r.idx);
    const flags = [
      r.floorLimited ? 'at floor: at most' : '',
      r.overload ? 'near overload' : '',
      r.state === 'done' && !r.settled ? 'not steady' : '',
    ]
      .filter(Boolean)
      .join(', ');
    return (
      `${ROLE_LABELS[r.role].padEnd(32)} ${(r.freqHz / 1e6).toFixed(6).padStart(10)}   ` +
      `${(r.floorLimited ? '≤' : '') + fmt(r.dbmDut, 2)}`.padStart(9) +
      `   ${r.uDb === null ? '—'.padStart(8) : (2 * r.uDb).toFixed(2).padStart(8)}` +
      `   ${((r.floorLimited && r.relDb !== null ? '≤' : '') + fmt(r.relDb, 2)).padStart(11)}   ${r.uRelDb === null ? '—'.padStart(8) : (2 * r.uRelDb).toFixed(2).padStart(8)}` +
      `   ${p?.avg ? String(p.avg.n) : '-'}${flags ? `  (${flags})` : ''}`
    );
  });
  return head + rows.join('\n') + '\n';
}

/** Levels in dBm are mostly negative: let "--max-input-dbm -10" work as a user expects. */
function joinNegative(argv: string[], opts: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    if (opts.includes(argv[i]) && /^-[\d.]/.test(argv[i + 1] ?? '')) {
      out.push(`${argv[i]}=${argv[i + 1]}`);
      i++;
    } else out.push(argv[i]);
  }
  return out;
}

/** Follows a running plan: progress on stderr, manual steps asked on the terminal, Ctrl+C cancels. */
async function follow(service: Service, id: string, io: Io): Promise<PlanView> {
  let asked = '';
  const off = service.listen('progress', (p) => {
    if (p.task !== `plan:${id}`) return;
    if (p.total > 0) io.err(`[${p.done}/${p.total}] ${p.message}\n`);
    else if (p.done >= 0 || !p.message.startsWith('waiting for you')) io.err(`  ${p.message}\n`);
    const v = service.plans.get(id);
    if (v.waiting && v.waiting.prompt !== asked) {
      asked = v.waiting.prompt;
      void prompter.ask(io, `${v.waiting.prompt}\nPress Enter to continue, or type "stop":`).then((a) => {
        asked = '';
        const ok = a !== null && a.trim().toLowerCase() !== 'stop';
        service.plans.continue(id, ok);
      });
    }
  });
  const onSigint = () => {
    io.err('\ncancelling the plan (the points done so far are kept)...\n');
    void service.invoke('planCancel', { planId: id }).catch(() => undefined);
  };
  process.once('SIGINT', onSigint);
  try {
    return await service.plans.wait(id);
  } finally {
    off();
    process.off('SIGINT', onSigint);
  }
}

export const planCommand: Command = {
  name: 'plan',
  usage: USAGE,
  async run(argv, io) {
    let store: Store | null = null;
    let service: Service | null = null;
    try {
      const { values, positionals } = parseOptions(
        joinNegative(argv, ['--max-input-dbm']),
        {
          session: { type: 'string' },
          unit: { type: 'string' },
          receiver: { type: 'string' },
          source: { type: 'string' },
          template: { type: 'string' },
          'max-input-dbm': { type: 'string' },
          'bandwidth-hz': { type: 'string' },
          path: { type: 'string' },
          'pep-w': { type: 'string' },
          'tx-pep-dbm': { type: 'string' },
          'carrier-hz': { type: 'string' },
          'tone-hz': { type: 'string' },
          operator: { type: 'string' },
          points: { type: 'string' },
          average: { type: 'string' },
          'settle-ms': { type: 'string' },
          'settle-timeout-ms': { type: 'string' },
          reference: { type: 'string' },
          json: { type: 'boolean', default: false },
          db: { type: 'string' },
          help: { type: 'boolean', short: 'h', default: false },
        },
        true,
      );
      if (values.help) {
        io.out(USAGE + '\n');
        return 0;
      }
      const [action, arg, ...extra] = positionals;
      if (extra.length) throw new BenchError('EINVAL', `unexpected "${extra.join(' ')}"`, 'arguments');
      store = new Store(values.db ?? defaultDbPath());
      service = new Service({ store, mode: 'cli' });
      const svc = service;
      const print = (v: PlanView) => io.out(values.json ? machineJson(v) + '\n' : planTableText(v));
      const finish = (v: PlanView) => {
        print(v);
        if (v.state === 'cancelled' || v.state === 'interrupted')
          io.err(`resume with: nullbench plan resume ${v.id}${values.db ? ` --db ${values.db}` : ''}\n`);
        return v.state === 'done' ? 0 : 1;
      };
      switch (action) {
        case 'run': {
          if (arg) throw new BenchError('EINVAL', `unexpected "${arg}"`, 'arguments');
          const sessionId = values.session ?? (await newSession(svc, values));
          const plan: Record<string, unknown> = {};
          if (values.points) plan.points = parsePointList(values.points);
          if (values.average !== undefined) plan.average = numberOption(values.average, 'average');
          if (values['settle-ms'] !== undefined)
            plan.settleMs = numberOption(values['settle-ms'], 'settle-ms');
          if (values['settle-timeout-ms'] !== undefined)
            plan.settleTimeoutMs = numberOption(values['settle-timeout-ms'], 'settle-timeout-ms');
          if (values.reference !== undefined) plan.reference = values.reference;
          const v = await svc.invoke('planStart', { sessionId, plan });
          io.err(`plan ${v.id} started on session ${sessionId}: ${v.points.length} points\n`);
          return finish(await follow(svc, v.id, io));
        }
        case 'resume': {
          if (!arg) throw new BenchError('EINVAL', 'needs the plan id', 'plan resume');
          const v = await svc.invoke('planResume', { planId: arg });
          io.err(
            `resuming plan ${v.id}: ${v.points.filter((p) => p.state === 'pending').length} points left\n`,
          );
          return finish(await follow(svc, v.id, io));
        }
        case 'show': {
          if (!arg) throw new BenchError('EINVAL', 'needs the plan id', 'plan show');
          print(await svc.invoke('getPlan', { planId: arg }));
          return 0;
        }
        case 'list': {
          const ids = values.session ? [values.session] : store.listSessions().map((s) => s.id);
          const all = [];
          for (const id of ids) all.push(...(await svc.invoke('listPlans', { sessionId: id })));
          if (values.json) io.out(machineJson(all) + '\n');
          else if (!all.length) io.out('no plans yet\n');
          else
            for (const v of all)
              io.out(
                `${v.id}  ${v.state.padEnd(11)} ${v.createdAt.slice(0, 16).replace('T', ' ')}  session ${v.sessionId}  ` +
                  `${v.points.filter((p) => p.state === 'done').length}/${v.points.length} points\n`,
              );
          return 0;
        }
        default:
          throw new BenchError('EINVAL', `expected run, resume, show or list, got "${action ?? ''}"`, 'plan');
      }
    } catch (e) {
      return reportError(e, io);
    } finally {
      await (service as Service | null)?.close();
      (store as Store | null)?.close();
      prompter.done();
    }
  },
};

async function newSession(svc: Service, v: Record<string, string | boolean | undefined>): Promise<string> {
  const str = (k: string) => v[k] as string | undefined;
  if (!str('unit'))
    throw new BenchError('EINVAL', 'give --session ID, or --unit SERIAL with the set-up', '--session');
  const unit = svc.store.findUnitBySerial(str('unit')!);
  if (!unit) throw new BenchError('ENOTFOUND', `no unit with serial "${str('unit')}"`, '--unit');
  let receiver;
  if (str('receiver')) {
    const r = svc.receivers.repo.findReceiver(str('receiver')!);
    receiver = {
      name: r.name,
      source: r.source,
      calibration: r.calibration,
      bandwidthHz: r.bandwidthHz,
      maxInputDbm: r.maxInputDbm,
      ...(r.template ? { template: r.template } : {}),
    };
  } else {
    if (!str('source')) throw new BenchError('EINVAL', 'give --receiver NAME or --source SPEC', '--receiver');
    receiver = {
      name: str('source')!,
      source: str('source')!,
      calibration: null,
      bandwidthHz: numberOption(str('bandwidth-hz'), 'bandwidth-hz', 500),
      maxInputDbm: numberOption(str('max-input-dbm'), 'max-input-dbm'),
      ...(str('template') ? { template: str('template') } : {}),
    };
  }
  const txPepDbm = pepOption({ 'pep-w': str('pep-w'), 'tx-pep-dbm': str('tx-pep-dbm') });
  const s = await svc.invoke('createSession', {
    unitId: unit.id,
    receiver,
    path: parsePathSpec(str('path') ?? ''),
    carrierHz: numberOption(str('carrier-hz'), 'carrier-hz'),
    toneHz: numberOption(str('tone-hz'), 'tone-hz'),
    txPepDbm,
    operator: str('operator') ?? '',
    trims: [
      { key: 'A', label: 'Balance R', unit: 'turns', min: 0, max: 10 },
      { key: 'B', label: 'Balance C', unit: 'turns', min: 0, max: 10 },
    ],
  });
  return s.id;
}
