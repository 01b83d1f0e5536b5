// Runs in the renderer. Designs and units over time: the design → revision → unit tree on the left, the
// chosen record on the right to rename, note what changed, or correct; a unit's sessions with their
// figures and verdicts; bundle export and import, readings as CSV.
import type { SessionResults, Tree, UnitListing } from '../../app/api';
import { EMISSIONS, EMISSION_LABELS, type Emission } from '../../app/analysis';
import { ROLE_LABELS } from '../../app/api';
import { clear, h } from '../dom';
import { when } from '../format';
import { go, type NavDeps, type RecordsView } from '../route';
import {
  badge,
  csvSeparatorChoice,
  download,
  downloadCsv,
  field,
  figureText,
  fileButton,
  importBundleText,
  importSummaryText,
} from './recordsui';

type Sel = { kind: 'design' | 'revision' | 'unit'; id: string } | null;

export class DesignsView implements RecordsView {
  private tree: Tree = [];
  private units: UnitListing[] = [];
  private sel: Sel = null;
  private sessionId: string | null = null;

  constructor(
    private readonly root: HTMLElement,
    private readonly deps: NavDeps,
  ) {}

  async show(params: Record<string, string>): Promise<void> {
    await this.load();
    if (params.unit) this.sel = { kind: 'unit', id: params.unit };
    else if (params.revision) this.sel = { kind: 'revision', id: params.revision };
    else if (params.design) this.sel = { kind: 'design', id: params.design };
    else if (!this.sel && this.tree[0]) this.sel = { kind: 'design', id: this.tree[0].id };
    this.sessionId = params.session ?? null;
    await this.render();
  }

  private async load(): Promise<void> {
    const { api } = this.deps;
    [this.tree, this.units] = await Promise.all([api.call('tree', {}), api.call('listUnits', {})]);
  }

  private async refresh(): Promise<void> {
    await this.load();
    await this.render();
  }

  /** Runs an action, reports its error in `err` (or as a notice), refreshes on success. */
  private act(err: HTMLElement | null, fn: () => Promise<unknown>, done?: string): void {
    if (err) err.textContent = '';
    void fn().then(
      async () => {
        if (done) this.deps.notify('info', done);
        await this.refresh();
      },
      (e: Error) => {
        if (err) err.textContent = e.message;
        else this.deps.notify('error', e.message);
      },
    );
  }

  private async render(): Promise<void> {
    clear(this.root);
    const { api, notify } = this.deps;
    const err = h('div', { class: 'error-text', role: 'alert', id: 'designs-error' });
    const newName = h('input', { name: 'new-design', placeholder: 'New design name' });
    const tools = h(
      'div',
      { class: 'row toolbar' },
      h(
        'form',
        {
          class: 'row inline-form',
          id: 'new-design',
          onsubmit: (e: Event) => {
            e.preventDefault();
            this.act(
              err,
              async () => {
                const d = await api.call('createDesign', { name: newName.value });
                this.sel = { kind: 'design', id: d.id };
              },
              'Design added',
            );
          },
        },
        newName,
        h('button', { type: 'submit' }, 'Add design'),
      ),
      h('span', { class: 'spacer' }),
      h(
        'button',
        {
          type: 'button',
          id: 'export-all',
          onclick: () =>
            void api.call('exportBundle', {}).then(
              (r) => download(r.fileName, r.json, 'application/json'),
              (e: Error) => notify('error', e.message),
            ),
        },
        'Export everything (bundle)',
      ),
      fileButton('Import bundle…', '.json,application/json', 'import-bundle', (text, name) => {
        notify('info', `Importing ${name}…`);
        void importBundleText(api, text).then(
          async (s) => {
            notify('info', importSummaryText(s));
            await this.refresh();
          },
          (e: Error) => notify('error', `${name} was not imported: ${e.message}`),
        );
      }),
      h(
        'button',
        {
          type: 'button',
          id: 'export-csv-all',
          onclick: () => downloadCsv(api, {}, (e) => notify('error', e.message)),
        },
        'All readings (CSV)',
      ),
      csvSeparatorChoice(),
    );
    const list = h(
      'nav',
      { class: 'card tree', 'aria-label': 'Designs, revisions and units' },
      h('h2', {}, 'Designs'),
    );
    if (!this.tree.length)
      list.append(
        h('p', { class: 'hint' }, 'No designs yet. Add one above, or start a session on the bench.'),
      );
    for (const d of this.tree) {
      const ul = h('ul', {});
      for (const r of d.revisions) {
        const units = h('ul', {});
        for (const u of r.units) units.append(h('li', {}, this.pick('unit', u.id, u.serial)));
        ul.append(h('li', {}, this.pick('revision', r.id, `Revision ${r.name}`), units));
      }
      list.append(h('div', { class: 'tree-design' }, this.pick('design', d.id, d.name), ul));
    }
    const detail = h('section', { class: 'stack', id: 'record-detail' });
    this.root.append(
      h('div', { class: 'records-head' }, h('h1', {}, 'Designs & units'), tools, err),
      h('div', { class: 'records-grid' }, list, detail),
    );
    await this.renderDetail(detail);
  }

  private pick(kind: 'design' | 'revision' | 'unit', id: string, label: string): HTMLElement {
    const on = this.sel?.kind === kind && this.sel.id === id;
    return h(
      'button',
      {
        type: 'button',
        class: `tree-item ${kind}${on ? ' on' : ''}`,
        'data-kind': kind,
        'data-id': id,
        onclick: () => {
          this.sel = { kind, id };
          this.sessionId = null;
          void this.render();
        },
      },
      label,
    );
  }

  private async renderDetail(box: HTMLElement): Promise<void> {
    const s = this.sel;
    if (!s) return;
    const design = this.tree.find(
      (d) => d.id === s.id || d.revisions.some((r) => r.id === s.id || r.units.some((u) => u.id === s.id)),
    );
    if (!design) {
      box.append(h('p', { class: 'hint' }, 'That record is not in this database.'));
      return;
    }
    if (s.kind === 'design') this.designPanel(box, design);
    else if (s.kind === 'revision')
      this.revisionPanel(
        box,
        design,
        design.revisions.find((r) => r.id === s.id)!,
      );
    else await this.unitPanel(box, design, s.id);
  }

  private designPanel(box: HTMLElement, d: Tree[number]): void {
    const { api } = this.deps;
    const err = h('div', { class: 'error-text', role: 'alert' });
    const name = h('input', { name: 'design-name', value: d.name });
    const notes = h('textarea', { name: 'design-notes', rows: 3 }, d.notes);
    const revName = h('input', { name: 'revision-name', placeholder: 'e.g. R3' });
    const revChanges = h('textarea', {
      name: 'revision-changes',
      rows: 2,
      placeholder: 'What changed on the board',
    });
    box.append(
      h(
        'form',
        {
          class: 'card form-card',
          id: 'design-form',
          onsubmit: (e: Event) => {
            e.preventDefault();
            this.act(
              err,
              () => api.call('updateDesign', { designId: d.id, name: name.value, notes: notes.value }),
              'Design saved',
            );
          },
        },
        h('h2', {}, 'Design'),
        field('Name', name),
        field('Notes', notes),
        h(
          'div',
          { class: 'row' },
          h('button', { type: 'submit', class: 'primary' }, 'Save'),
          h(
            'button',
            { type: 'button', onclick: () => go('compare', { design: d.id }) },
            'Compare its revisions',
          ),
          h(
            'button',
            {
              type: 'button',
              onclick: () =>
                void api.call('exportBundle', { designId: d.id }).then(
                  (r) => download(r.fileName, r.json, 'application/json'),
                  (e: Error) => (err.textContent = e.message),
                ),
            },
            'Export this design (bundle)',
          ),
        ),
        err,
      ),
      h(
        'form',
        {
          class: 'card form-card',
          id: 'revision-add',
          onsubmit: (e: Event) => {
            e.preventDefault();
            this.act(
              err,
              async () => {
                const r = await api.call('createRevision', {
                  designId: d.id,
                  name: revName.value,
                  changes: revChanges.value,
                });
                this.sel = { kind: 'revision', id: r.id };
              },
              'Revision added',
            );
          },
        },
        h('h2', {}, 'New board revision'),
        field('Revision', revName),
        field('What changed', revChanges),
        h('button', { type: 'submit' }, 'Add revision'),
      ),
      h(
        'section',
        { class: 'card' },
        h('h2', {}, 'Revisions'),
        h(
          'table',
          {},
          h(
            'thead',
            {},
            h(
              'tr',
              {},
              h('th', {}, 'Revision'),
              h('th', {}, 'What changed'),
              h('th', { class: 'num' }, 'Units'),
            ),
          ),
          h(
            'tbody',
            {},
            ...d.revisions.map((r) =>
              h(
                'tr',
                {
                  class: 'pick',
                  onclick: () => ((this.sel = { kind: 'revision', id: r.id }), void this.render()),
                },
                h('td', {}, r.name),
                h('td', {}, r.changes || '—'),
                h('td', { class: 'num' }, String(r.units.length)),
              ),
            ),
          ),
        ),
      ),
    );
  }

  private revisionPanel(box: HTMLElement, d: Tree[number], r: Tree[number]['revisions'][number]): void {
    const { api } = this.deps;
    const err = h('div', { class: 'error-text', role: 'alert' });
    const name = h('input', { name: 'revision-name', value: r.name });
    const changes = h('textarea', { name: 'revision-changes', rows: 3 }, r.changes);
    const serial = h('input', { name: 'unit-serial', placeholder: 'Serial' });
    const built = h('input', { name: 'unit-built', type: 'date' });
    const builder = h('input', { name: 'unit-builder' });
    box.append(
      h(
        'form',
        {
          class: 'card form-card',
          id: 'revision-form',
          onsubmit: (e: Event) => {
            e.preventDefault();
            this.act(
              err,
              () =>
                api.call('updateRevision', { revisionId: r.id, name: name.value, changes: changes.value }),
              'Revision saved',
            );
          },
        },
        h('h2', {}, `${d.name}: board revision`),
        field('Revision', name),
        field('What changed on this board', changes),
        h(
          'div',
          { class: 'row' },
          h('button', { type: 'submit', class: 'primary' }, 'Save'),
          h(
            'button',
            { type: 'button', onclick: () => go('compare', { design: d.id }) },
            'Compare revisions',
          ),
        ),
        err,
      ),
      h(
        'form',
        {
          class: 'card form-card',
          id: 'unit-add',
          onsubmit: (e: Event) => {
            e.preventDefault();
            this.act(
              err,
              async () => {
                const u = await api.call('createUnit', {
                  revisionId: r.id,
                  serial: serial.value,
                  buildDate: built.value,
                  builder: builder.value,
                });
                this.sel = { kind: 'unit', id: u.id };
              },
              'Unit added',
            );
          },
        },
        h('h2', {}, 'New unit of this revision'),
        h(
          'div',
          { class: 'form' },
          field('Serial', serial),
          field('Built on', built),
          field('Built by', builder),
        ),
        h('button', { type: 'submit' }, 'Add unit'),
      ),
      h(
        'section',
        { class: 'card' },
        h('h2', {}, 'Units'),
        r.units.length
          ? h(
              'table',
              {},
              h(
                'thead',
                {},
                h(
                  'tr',
                  {},
                  h('th', {}, 'Serial'),
                  h('th', {}, 'Built'),
                  h('th', {}, 'By'),
                  h('th', { class: 'num' }, 'Sessions'),
                ),
              ),
              h(
                'tbody',
                {},
                ...r.units.map((u) =>
                  h(
                    'tr',
                    {
                      class: 'pick',
                      onclick: () => ((this.sel = { kind: 'unit', id: u.id }), void this.render()),
                    },
                    h('td', {}, u.serial),
                    h('td', {}, u.buildDate || '—'),
                    h('td', {}, u.builder || '—'),
                    h('td', { class: 'num' }, String(this.units.find((x) => x.id === u.id)?.sessions ?? 0)),
                  ),
                ),
              ),
            )
          : h('p', { class: 'hint' }, 'No units of this revision yet.'),
      ),
    );
  }

  private async unitPanel(box: HTMLElement, d: Tree[number], unitId: string): Promise<void> {
    const { api, notify } = this.deps;
    const u = this.units.find((x) => x.id === unitId)!;
    const err = h('div', { class: 'error-text', role: 'alert' });
    const serial = h('input', { name: 'unit-serial', value: u.serial });
    const built = h('input', { name: 'unit-built', value: u.buildDate });
    const builder = h('input', { name: 'unit-builder', value: u.builder });
    const notes = h('textarea', { name: 'unit-notes', rows: 2 }, u.notes);
    const rev = h(
      'select',
      { name: 'unit-revision' },
      ...d.revisions.map((r) =>
        h('option', { value: r.id, selected: r.id === u.revisionId }, `Revision ${r.name}`),
      ),
    );
    box.append(
      h(
        'form',
        {
          class: 'card form-card',
          id: 'unit-form',
          onsubmit: (e: Event) => {
            e.preventDefault();
            this.act(
              err,
              () =>
                api.call('updateUnit', {
                  unitId,
                  serial: serial.value,
                  buildDate: built.value,
                  builder: builder.value,
                  notes: notes.value,
                  revisionId: rev.value,
                }),
              'Unit saved',
            );
          },
        },
        h('h2', {}, `Unit ${u.serial} · ${d.name}`),
        h(
          'div',
          { class: 'form' },
          field('Serial', serial),
          field('Built on', built),
          field('Built by', builder),
          field('Revision', rev),
          field('Notes', notes, 'two-col'),
        ),
        h(
          'div',
          { class: 'row' },
          h('button', { type: 'submit', class: 'primary' }, 'Save'),
          h(
            'button',
            { type: 'button', id: 'unit-sheet', onclick: () => go('sheet', { unit: unitId }) },
            'Test sheet',
          ),
          h(
            'button',
            {
              type: 'button',
              onclick: () => downloadCsv(api, { unitId }, (e) => (err.textContent = e.message)),
            },
            'Readings (CSV)',
          ),
        ),
        err,
      ),
    );
    const sessions = await api.call('listSessions', { unitId });
    const results = h('div', { id: 'session-results' });
    const table = h(
      'table',
      { id: 'unit-sessions' },
      h(
        'thead',
        {},
        h(
          'tr',
          {},
          h('th', {}, 'Session'),
          h('th', {}, 'Operator'),
          h('th', { class: 'num' }, 'Kept'),
          h('th', { class: 'num' }, 'Best carrier (dBm)'),
        ),
      ),
      h(
        'tbody',
        {},
        ...sessions.map((s) =>
          h(
            'tr',
            {
              class: `pick${s.id === this.sessionId ? ' on' : ''}`,
              'data-session': s.id,
              onclick: () => {
                this.sessionId = s.id;
                table.querySelectorAll('tr.on').forEach((x) => x.classList.remove('on'));
                (table.querySelector(`tr[data-session="${s.id}"]`) as HTMLElement | null)?.classList.add(
                  'on',
                );
                void this.sessionPanel(results, s.id, s.startedAt).catch((e: Error) =>
                  notify('error', e.message),
                );
              },
            },
            h('td', {}, when(s.startedAt)),
            h('td', {}, s.operator || '—'),
            h('td', { class: 'num' }, String(s.kept)),
            h('td', { class: 'num' }, s.bestCarrierDbm === null ? '—' : f1dbm(s.bestCarrierDbm)),
          ),
        ),
      ),
    );
    box.append(
      h(
        'section',
        { class: 'card' },
        h('h2', {}, 'Sessions'),
        sessions.length ? table : h('p', { class: 'hint' }, 'This unit has not been on the bench yet.'),
        results,
      ),
    );
    const first = sessions.find((s) => s.id === this.sessionId) ?? sessions.find((s) => s.kept > 0);
    if (first) {
      this.sessionId = first.id;
      (table.querySelector(`tr[data-session="${first.id}"]`) as HTMLElement | null)?.classList.add('on');
      await this.sessionPanel(results, first.id, first.startedAt);
    }
  }

  private async sessionPanel(box: HTMLElement, sessionId: string, startedAt: string): Promise<void> {
    const { api, notify } = this.deps;
    clear(box);
    const r: SessionResults = await api.call('sessionResults', { sessionId });
    const f = r.figures;
    const emission = h(
      'select',
      {
        id: 'session-emission',
        onchange: () =>
          void api.call('setEmission', { sessionId, emission: emission.value as Emission }).then(
            () => this.sessionPanel(box, sessionId, startedAt),
            (e: Error) => notify('error', e.message),
          ),
      },
      ...EMISSIONS.map((e) => h('option', { value: e, selected: e === r.emission }, EMISSION_LABELS[e])),
    );
    const row = (label: string, text: string, note = '') =>
      h('tr', {}, h('td', {}, label), h('td', { class: 'num' }, text), h('td', { class: 'hint' }, note));
    const rows = [
      row('Carrier below PEP', figureText(f.carrier.pep), f.carrier.pep?.notes.join('; ')),
      row('Carrier below one tone', figureText(f.carrier.tone)),
      row('Carrier below the unbalanced carrier', figureText(f.carrier.unbalanced)),
      f.emission === 'dsb'
        ? row('Sideband balance (upper − lower)', figureText(f.balance, true))
        : row('Opposite sideband suppression', figureText(f.opposite)),
      row('IMD3 below PEP (worse line)', figureText(f.imd3.pep)),
      ...f.harmonics.map((x) => row(`${ROLE_LABELS[x.role]} below the mean power`, figureText(x.belowMean))),
    ];
    box.append(
      h(
        'div',
        { class: 'row spread center gap-top' },
        h('h3', {}, `Results of the session of ${when(startedAt)}`),
        h('label', { class: 'inline' }, 'Emission', emission),
      ),
      h(
        'table',
        { class: 'figures' },
        h(
          'thead',
          {},
          h('tr', {}, h('th', {}, 'Figure'), h('th', { class: 'num' }, 'Result (k = 2)'), h('th', {}, '')),
        ),
        h('tbody', {}, ...rows),
      ),
      h('ul', { class: 'warn-list' }, ...f.warnings.map((w) => h('li', {}, w))),
      h(
        'div',
        { class: 'verdict-list' },
        ...r.verdicts.map((v) =>
          h(
            'div',
            { class: 'verdict-row' },
            badge(v.overall),
            h('span', {}, v.setName),
            h('span', { class: 'hint' }, v.reason),
          ),
        ),
      ),
      h(
        'div',
        { class: 'row gap-top' },
        h(
          'button',
          {
            type: 'button',
            id: 'open-on-bench',
            onclick: () =>
              void api.call('openSession', { sessionId }).then(
                (s) => {
                  this.deps.openSession(s);
                  go('bench');
                },
                (e: Error) => notify('error', e.message),
              ),
          },
          'Open on the bench',
        ),
        h(
          'button',
          {
            type: 'button',
            onclick: () => downloadCsv(api, { sessionId }, (e) => notify('error', e.message)),
          },
          'This session’s readings (CSV)',
        ),
      ),
    );
  }
}

function f1dbm(x: number): string {
  return `${x < 0 ? '−' : ''}${Math.abs(x).toFixed(1)}`;
}
