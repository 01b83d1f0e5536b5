// Runs in the renderer. The sessions dialog: pick an earlier session, or set up a new one (design, revision,
// unit, receiver, path, power) in one form. The set-up is checked by the service, which refuses unsafe ones.
import { SETUP_CAUTION } from '../../app/caution';
import type { ServiceClient, Session, SessionSummary, Tree } from '../../app/api';
import { errorText } from '../../app/errors';
import { formatPath, parsePathSpec } from '../../app/path';
import type { StoredReceiver } from '../../app/receiver';
import { ApiError } from '../api';
import { h } from '../dom';
import { dbm, when } from '../format';
import { readNumber } from '../numinput';
import { openModal } from '../dialog';

export interface SessionsDialogDeps {
  api: ServiceClient;
  onOpened(session: Session): void;
}

function field(label: string, input: HTMLElement, cls = ''): HTMLLabelElement {
  return h('label', { class: cls }, label, input);
}

export async function showSessionsDialog(deps: SessionsDialogDeps, closable: boolean): Promise<void> {
  const { api } = deps;
  const [tree, sessions] = await Promise.all([api.call('tree', {}), api.call('listSessions', {})]);
  const overlay = h('div', { class: 'overlay', id: 'sessions-dialog' });
  let close = () => overlay.remove();
  const dialog = h('div', { class: 'dialog' });
  overlay.append(dialog);
  dialog.append(
    h(
      'div',
      { class: 'row spread center' },
      h('h1', {}, 'Sessions'),
      closable ? h('button', { type: 'button', class: 'ghost', onclick: () => close() }, 'Close') : null,
    ),
    h(
      'p',
      { class: 'hint' },
      'A session is one sitting at the bench with one unit, one receiver and one signal path. Open an earlier one to continue it (one that has ended opens for review, with a way to start a new one like it), or start a new one.',
    ),
  );
  const two = h('div', { class: 'two' });
  two.append(
    sessionList(
      sessions,
      async (id) => {
        const s = await api.call('openSession', { sessionId: id });
        close();
        deps.onOpened(s);
      },
      deps,
    ),
    newSessionForm(tree, deps, () => close()),
  );
  dialog.append(two);
  close = openModal(overlay, closable);
}

function sessionList(
  sessions: SessionSummary[],
  open: (id: string) => Promise<void>,
  deps: SessionsDialogDeps,
): HTMLElement {
  const card = h('section', { class: 'card' }, h('h2', {}, 'Earlier sessions'));
  if (!sessions.length) {
    const msg = h('p', { class: 'hint', id: 'demo-msg' });
    const btn = h('button', { type: 'button', id: 'load-demo' }, 'Load demo history');
    btn.addEventListener('click', () => {
      btn.disabled = true;
      msg.textContent = 'Writing an invented demo scenario (six boards, two revisions)…';
      void deps.api
        .call('loadDemo', {})
        .then(() => {
          document.getElementById('sessions-dialog')?.remove();
          return showSessionsDialog(deps, true);
        })
        .catch((e: Error) => {
          msg.textContent = e.message;
          btn.disabled = false;
        });
    });
    card.append(
      h('p', { class: 'hint' }, 'None yet. Start one on the right; the simulated bench needs no hardware.'),
      h('p', { class: 'hint' }, 'Or look around first in an invented history of earlier sessions:'),
      btn,
      msg,
    );
    return card;
  }
  const err = h('div', { class: 'error-text' });
  const tbody = h('tbody');
  for (const s of sessions.slice(0, 40)) {
    tbody.append(
      h(
        'tr',
        {
          class: 'pick',
          tabindex: 0,
          'data-session': s.id,
          onclick: () => void open(s.id).catch((e: Error) => (err.textContent = e.message)),
        },
        h('td', {}, s.serial),
        h('td', {}, `${s.design} ${s.revision}`),
        h('td', {}, when(s.startedAt)),
        h('td', { class: s.endedAt ? 'hint' : '' }, s.endedAt ? 'ended' : 'open'),
        h('td', { class: 'num' }, String(s.kept)),
        h('td', { class: 'num' }, s.bestCarrierDbm === null ? '—' : dbm(s.bestCarrierDbm)),
      ),
    );
  }
  card.append(
    h(
      'div',
      { class: 'scroll' },
      h(
        'table',
        {},
        h(
          'thead',
          {},
          h(
            'tr',
            {},
            h('th', {}, 'Unit'),
            h('th', {}, 'Design'),
            h('th', {}, 'Started'),
            h('th', {}, 'State'),
            h('th', { class: 'num' }, 'Kept'),
            h('th', { class: 'num' }, 'Best carrier dBm'),
          ),
        ),
        tbody,
      ),
    ),
    err,
  );
  return card;
}

function newSessionForm(tree: Tree, deps: SessionsDialogDeps, close: () => void): HTMLElement {
  const { api } = deps;
  const firstDesign = tree[0];
  const firstRev = firstDesign?.revisions[firstDesign.revisions.length - 1];
  const input = (name: string, value: string, attrs: Record<string, string> = {}) =>
    h('input', { name, value, ...attrs });
  const designs = h('input', {
    name: 'design',
    value: firstDesign?.name ?? 'My DSB transmitter',
    list: 'design-list',
  });
  const revision = h('input', { name: 'revision', value: firstRev?.name ?? 'A', list: 'revision-list' });
  const serial = input('serial', nextSerial(tree));
  const source = input('source', 'sim');
  const path = input('path', 'coupler:30,pad:20');
  const pep = input('pep', '1', { inputmode: 'decimal' });
  const carrier = input('carrier', '7.1', { inputmode: 'decimal' });
  const tone = input('tone', '1000', { inputmode: 'decimal' });
  const bw = input('bandwidth', '500', { inputmode: 'decimal' });
  const maxIn = input('maxin', '10', { inputmode: 'decimal' });
  // A stored receiver profile fills in the link, bandwidth and rated maximum, and brings its calibration.
  let profile: StoredReceiver | null = null;
  const profiles = h(
    'select',
    { name: 'receiver-profile' },
    h('option', { value: '' }, 'none: type the link'),
  );
  void api
    .call('listReceivers', {})
    .then((list) => {
      for (const r of list) profiles.append(h('option', { value: r.id }, r.name));
      profiles.addEventListener('change', () => {
        profile = list.find((r) => r.id === profiles.value) ?? null;
        if (!profile) return;
        source.value = profile.source;
        bw.value = String(profile.bandwidthHz);
        maxIn.value = String(profile.maxInputDbm);
      });
    })
    .catch(() => undefined);
  const operator = input('operator', '');
  // The trimmers the builder will turn: names and units are theirs; B may be left empty for a one-trimmer board.
  const trimRows = [
    {
      key: 'A',
      label: input('trimA-label', 'Balance R'),
      unit: input('trimA-unit', 'turns'),
      min: input('trimA-min', '0'),
      max: input('trimA-max', '10'),
    },
    {
      key: 'B',
      label: input('trimB-label', 'Balance C'),
      unit: input('trimB-unit', 'turns'),
      min: input('trimB-min', '0'),
      max: input('trimB-max', '10'),
    },
  ];
  const pathEcho = h('p', { class: 'hint', id: 'path-echo' });
  const err = h('div', { class: 'error-text', id: 'session-error', role: 'alert' });
  const echo = () => {
    try {
      pathEcho.textContent = `Path: ${formatPath(parsePathSpec(path.value))}`;
    } catch (e) {
      pathEcho.textContent = (e as Error).message;
    }
  };
  path.addEventListener('input', echo);
  echo();
  const lists = h(
    'div',
    {},
    h('datalist', { id: 'design-list' }, ...tree.map((d) => h('option', { value: d.name }))),
    h(
      'datalist',
      { id: 'revision-list' },
      ...(firstDesign?.revisions ?? []).map((r) => h('option', { value: r.name })),
    ),
  );

  const start = h('button', { type: 'submit', class: 'primary', id: 'start-session' }, 'Start session');
  const form = h(
    'form',
    { class: 'form', id: 'new-session' },
    field('Design', designs),
    field('Board revision', revision),
    field('Unit serial', serial),
    field('Stored receiver', profiles),
    field('Receiver source', source, 'two-col'),
    field('Receiver bandwidth (Hz)', bw),
    field('Signal path, transmitter → receiver', path, 'two-col'),
    field('Receiver rated max input (dBm)', maxIn),
    h('div', { class: 'wide' }, pathEcho),
    field('Transmitter PEP (W)', pep),
    field('Carrier (MHz)', carrier),
    field('Audio tone (Hz)', tone),
    field('Operator', operator),
    ...trimRows.map((t) =>
      h(
        'div',
        { class: 'wide trim-def' },
        field(`Trimmer ${t.key} name${t.key === 'B' ? ' (empty: none)' : ''}`, t.label),
        field('unit', t.unit),
        field('from', t.min),
        field('to', t.max),
      ),
    ),
    h('div', { class: 'wide' }, h('p', { class: 'caution' }, `Caution: ${SETUP_CAUTION}`), err, start),
    lists,
  );
  form.addEventListener('submit', (ev) => {
    ev.preventDefault();
    err.textContent = '';
    start.disabled = true;
    void (async () => {
      try {
        const num = (el: HTMLInputElement, what: string) => readNumber(el, what);
        const pepW = num(pep, 'Transmitter PEP');
        if (!(pepW > 0)) throw new ApiError('EINVAL', 'Transmitter PEP: must be above 0 W');
        const elements = parsePathSpec(path.value);
        const fromProfile = profile !== null && profile.source === source.value.trim();
        // One call: the service checks the whole set-up (the receiver safety check among it) before it
        // finds or creates the design, revision and unit, so a refused set-up leaves nothing behind.
        const s = await api.call('startSession', {
          design: designs.value,
          revision: revision.value,
          serial: serial.value,
          open: true,
          receiver: {
            name: fromProfile
              ? profile!.name
              : source.value === 'sim'
                ? 'Simulated bench receiver'
                : source.value,
            source: source.value,
            calibration: fromProfile ? profile!.calibration : null,
            ...(fromProfile && profile!.template ? { template: profile!.template } : {}),
            bandwidthHz: num(bw, 'Receiver bandwidth'),
            maxInputDbm: num(maxIn, 'Receiver rated max input'),
          },
          path: elements,
          carrierHz: num(carrier, 'Carrier') * 1e6,
          toneHz: num(tone, 'Audio tone'),
          txPepDbm: 10 * Math.log10(pepW * 1000),
          operator: operator.value,
          trims: trimRows
            .filter((t) => t.key === 'A' || t.label.value.trim() !== '')
            .map((t) => ({
              key: t.key,
              label: t.label.value,
              unit: t.unit.value,
              min: num(t.min, `Trimmer ${t.key} from`),
              max: num(t.max, `Trimmer ${t.key} to`),
            })),
        });
        close();
        deps.onOpened(s);
      } catch (e) {
        err.textContent = errorText(e);
      } finally {
        start.disabled = false;
      }
    })();
  });
  return h('section', { class: 'card' }, h('h2', {}, 'New session'), form);
}

function nextSerial(tree: Tree): string {
  const n = tree.reduce((acc, d) => acc + d.revisions.reduce((a, r) => a + r.units.length, 0), 0);
  return `UNIT-${String(n + 1).padStart(3, '0')}`;
}
