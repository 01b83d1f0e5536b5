// Runs in the renderer. Test sheets: pick a unit, choose what its sheet states (session, suppression
// reference, limit sets, notes), see the sheet as it will print, print it or save it as PDF; keep limit
// sets of your own beside the presets (each preset shows where its figures come from).
import type { LimitSetEntry, SheetSettings, UnitListing } from '../../app/api';
import { REFERENCE_LABELS, SUPPRESSION_REFERENCES, type SuppressionReference } from '../../app/analysis';
import { STANDING_LABELS, VERIFY_CAUTION, ruleText, type LimitRule } from '../../app/limits';
import { clear, h } from '../dom';
import { when } from '../format';
import { go, type NavDeps, type RecordsView } from '../route';
import { base64Bytes, csvSeparatorChoice, download, downloadCsv, field } from './recordsui';
import { numberInput, readNumber } from '../numinput';
import { PAPERS, PAPER_LABELS, paperForLocale, type Paper } from '../../app/paper';

const METRIC_CHOICES: { value: string; label: string }[] = [
  { value: 'carrier:pep', label: 'Carrier, dB below PEP (at least)' },
  { value: 'carrier:tone', label: 'Carrier, dB below one tone (at least)' },
  { value: 'carrier:unbalanced', label: 'Carrier, dB below the unbalanced carrier (at least)' },
  { value: 'opposite', label: 'Opposite sideband, dB below the wanted (at least)' },
  { value: 'imd3:pep', label: 'IMD3, dB below PEP (at least)' },
  { value: 'imd3:tone', label: 'IMD3, dB below one tone (at least)' },
  { value: 'balance', label: 'Sideband balance, ± dB (at most)' },
  { value: 'spurious:mean', label: 'Harmonics, dB below the mean power (at least)' },
];

function ruleFrom(choice: string, db: number): LimitRule {
  const [metric, ref] = choice.split(':');
  switch (metric) {
    case 'carrier':
      return { metric: 'carrier', reference: ref as SuppressionReference, minDb: db };
    case 'imd3':
      return { metric: 'imd3', reference: ref as 'tone' | 'pep', minDb: db };
    case 'opposite':
      return { metric: 'opposite', minDb: db };
    case 'balance':
      return { metric: 'balance', maxDb: db };
    default:
      return { metric: 'spurious', reference: 'mean', minDb: db };
  }
}

export class SheetView implements RecordsView {
  constructor(
    private readonly root: HTMLElement,
    private readonly deps: NavDeps,
  ) {}

  async show(params: Record<string, string>): Promise<void> {
    const { api } = this.deps;
    clear(this.root);
    const [units, sets] = await Promise.all([api.call('listUnits', {}), api.call('limitSets', {})]);
    const unitId = params.unit ?? units.find((u) => u.sessions > 0)?.id;
    const unitSel = h(
      'select',
      { id: 'sheet-unit', onchange: () => go('sheet', { unit: unitSel.value }) },
      ...units.map((u) =>
        h('option', { value: u.id, selected: u.id === unitId }, `${u.serial} · ${u.design} ${u.revision}`),
      ),
    );
    this.root.append(
      h(
        'div',
        { class: 'records-head no-print' },
        h('h1', {}, 'Test sheets'),
        h('div', { class: 'row toolbar' }, h('label', { class: 'inline' }, 'Unit', unitSel)),
      ),
    );
    if (!unitId) {
      this.root.append(
        h(
          'p',
          { class: 'hint' },
          'No unit yet: add one under Designs & units, then measure it on the bench.',
        ),
      );
      return;
    }
    const unit = units.find((u) => u.id === unitId)!;
    const settings = await api.call('sheetSettings', { unitId });
    const preview = h('div', { class: 'paper', id: 'sheet-preview', 'aria-label': 'Test sheet preview' });
    const side = h('div', { class: 'stack no-print' });
    this.root.append(h('div', { class: 'sheet-layout' }, side, h('div', { class: 'paper-wrap' }, preview)));
    await this.settingsCard(side, unit, settings, sets, preview);
    this.limitSetsCard(side, sets, unit.id);
    await this.renderPreview(preview, unit.id, settings.sessionId ?? undefined);
  }

  private async renderPreview(box: HTMLElement, unitId: string, sessionId?: string): Promise<void> {
    clear(box);
    try {
      const s = await this.deps.api.call('sheetHtml', { unitId, sessionId });
      // The sheet is the service's own markup with every text escaped; it carries classes only (no inline
      // styles, no scripts), shown with sheet.css.
      const doc = new DOMParser().parseFromString(s.fragment, 'text/html');
      box.replaceChildren(...Array.from(doc.body.childNodes).map((n) => document.adoptNode(n)));
      box.dataset.sheetRef = s.sheetRef;
      box.dataset.overall = s.overall;
    } catch (e) {
      box.append(h('p', { class: 'sheet-missing' }, (e as Error).message));
    }
  }

  private async settingsCard(
    side: HTMLElement,
    unit: UnitListing,
    st: SheetSettings,
    sets: LimitSetEntry[],
    preview: HTMLElement,
  ): Promise<void> {
    const { api, notify } = this.deps;
    const sessions = (await api.call('listSessions', { unitId: unit.id })).filter((s) => s.kept > 0);
    const err = h('div', { class: 'error-text', role: 'alert', id: 'sheet-error' });
    const session = h(
      'select',
      { name: 'sheet-session' },
      h('option', { value: '', selected: st.sessionId === null }, 'the latest session'),
      ...sessions.map((s) =>
        h(
          'option',
          { value: s.id, selected: s.id === st.sessionId },
          `${when(s.startedAt)} (${s.kept} kept)`,
        ),
      ),
    );
    const reference = h(
      'select',
      { name: 'sheet-reference' },
      ...SUPPRESSION_REFERENCES.map((r) =>
        h(
          'option',
          { value: r, selected: r === st.reference },
          r === 'pep' ? 'PEP of the test signal' : REFERENCE_LABELS[r],
        ),
      ),
    );
    const notes = h('textarea', { name: 'sheet-notes', rows: 3 }, st.notes);
    const boxes = sets.map((s) =>
      h(
        'label',
        { class: 'check', title: s.source },
        h('input', {
          type: 'checkbox',
          name: 'sheet-limit',
          value: s.id,
          checked: st.limitSetIds.includes(s.id),
        }),
        h('span', {}, s.name, ' ', h('span', { class: 'tag' }, STANDING_LABELS[s.standing])),
      ),
    );
    // The paper: chosen per sheet, kept per browser, the first time from the browser's locale.
    const paper = h(
      'select',
      {
        name: 'sheet-paper',
        onchange: () => {
          try {
            localStorage.setItem('nullbench.paper', paper.value);
          } catch {
            // Not kept; this sheet still uses it.
          }
          document.body.classList.toggle('paper-letter', paper.value === 'letter');
        },
      },
      ...PAPERS.map((p) => h('option', { value: p }, PAPER_LABELS[p])),
    );
    paper.value = savedPaper();
    document.body.classList.toggle('paper-letter', paper.value === 'letter');
    const save = async () => {
      await api.call('saveSheetSettings', {
        unitId: unit.id,
        sessionId: session.value === '' ? null : session.value,
        reference: reference.value as SuppressionReference,
        notes: notes.value,
        limitSetIds: boxes
          .map((b) => b.querySelector('input')!)
          .filter((i) => i.checked)
          .map((i) => i.value),
      });
      await this.renderPreview(preview, unit.id, session.value || undefined);
    };
    side.append(
      h(
        'form',
        {
          class: 'card form-card',
          id: 'sheet-settings',
          onsubmit: (e: Event) => {
            e.preventDefault();
            err.textContent = '';
            void save().then(
              () => notify('info', 'Sheet settings saved'),
              (x: Error) => (err.textContent = x.message),
            );
          },
        },
        h('h2', {}, `Sheet of ${unit.serial}`),
        field('Session reported', session),
        field('Carrier suppression stated against', reference),
        h('fieldset', { class: 'checks' }, h('legend', {}, 'Limit sets'), ...boxes),
        h('p', { class: 'caution' }, VERIFY_CAUTION),
        field('Notes printed on the sheet', notes),
        h('button', { type: 'submit', class: 'primary' }, 'Save and refresh'),
        err,
      ),
      h(
        'section',
        { class: 'card' },
        h('h2', {}, 'Print or save'),
        field('Paper', paper),
        h(
          'div',
          { class: 'row' },
          h(
            'button',
            {
              type: 'button',
              id: 'sheet-print',
              onclick: () => {
                document.body.classList.add('printing-sheet');
                window.print();
                setTimeout(() => document.body.classList.remove('printing-sheet'), 500);
              },
            },
            'Print…',
          ),
          h(
            'button',
            {
              type: 'button',
              id: 'sheet-pdf',
              onclick: (e: Event) => {
                const b = e.currentTarget as HTMLButtonElement;
                b.disabled = true;
                b.textContent = 'Making the PDF…';
                void api
                  .call('sheetPdf', {
                    unitId: unit.id,
                    sessionId: session.value || undefined,
                    paper: paper.value as Paper,
                  })
                  .then(
                    (r) => download(r.fileName, base64Bytes(r.base64), 'application/pdf'),
                    (x: Error) => notify('error', x.message),
                  )
                  .finally(() => {
                    b.disabled = false;
                    b.textContent = 'Save as PDF';
                  });
              },
            },
            'Save as PDF',
          ),
          h(
            'button',
            {
              type: 'button',
              onclick: () => downloadCsv(api, { unitId: unit.id }, (x) => notify('error', x.message)),
            },
            'Readings (CSV)',
          ),
          csvSeparatorChoice(),
        ),
      ),
    );
  }

  private limitSetsCard(side: HTMLElement, sets: LimitSetEntry[], unitId: string): void {
    const { api, notify } = this.deps;
    const err = h('div', { class: 'error-text', role: 'alert', id: 'limit-error' });
    const name = h('input', { name: 'limit-name', placeholder: 'e.g. Kit target' });
    const source = h('input', { name: 'limit-source', placeholder: 'where the figures come from' });
    const rules = h('div', { class: 'rules', id: 'limit-rules' });
    const addRow = () => {
      const metric = h(
        'select',
        { name: 'rule-metric', 'aria-label': 'Figure the rule limits' },
        ...METRIC_CHOICES.map((c) => h('option', { value: c.value }, c.label)),
      );
      const value = numberInput({ name: 'rule-db', value: '40', 'aria-label': 'dB' });
      const row = h(
        'div',
        { class: 'rule-row' },
        metric,
        value,
        h('span', {}, 'dB'),
        h('button', { type: 'button', class: 'ghost', title: 'remove', onclick: () => row.remove() }, '×'),
      );
      rules.append(row);
    };
    addRow();
    const list = h(
      'ul',
      { class: 'limit-list' },
      ...sets.map((s) =>
        h(
          'li',
          {},
          h('b', {}, s.name),
          ' ',
          h('span', { class: 'tag' }, STANDING_LABELS[s.standing]),
          s.preset
            ? null
            : h(
                'button',
                {
                  type: 'button',
                  class: 'ghost small',
                  onclick: () =>
                    void api.call('deleteLimitSet', { limitSetId: s.id }).then(
                      () => go('sheet', { unit: unitId }),
                      (e: Error) => notify('error', e.message),
                    ),
                },
                'delete',
              ),
          h('div', { class: 'hint' }, s.rules.map(ruleText).join('; ')),
          s.source ? h('div', { class: 'hint source' }, s.source) : null,
        ),
      ),
    );
    side.append(
      h(
        'section',
        { class: 'card' },
        h('h2', {}, 'Limit sets'),
        list,
        h('p', { class: 'caution' }, VERIFY_CAUTION),
      ),
      h(
        'form',
        {
          class: 'card form-card',
          id: 'limit-form',
          onsubmit: (e: Event) => {
            e.preventDefault();
            err.textContent = '';
            let ruleList;
            try {
              ruleList = Array.from(rules.querySelectorAll('.rule-row')).map((r, i) =>
                ruleFrom(
                  (r.querySelector('select') as HTMLSelectElement).value,
                  readNumber(r.querySelector('input') as HTMLInputElement, `rule ${i + 1}: dB`, {
                    unit: 'dB',
                  }),
                ),
              );
            } catch (x) {
              err.textContent = (x as Error).message;
              return;
            }
            void api
              .call('saveLimitSet', { set: { name: name.value, source: source.value, rules: ruleList } })
              .then(
                (s) => {
                  notify('info', `Limit set "${s.name}" saved`);
                  go('sheet', { unit: unitId });
                },
                (x: Error) => (err.textContent = x.message),
              );
          },
        },
        h('h2', {}, 'New limit set of your own'),
        field('Name', name),
        field('Source', source),
        rules,
        h(
          'div',
          { class: 'row' },
          h('button', { type: 'button', onclick: addRow }, 'Add a rule'),
          h('button', { type: 'submit' }, 'Save limit set'),
        ),
        err,
      ),
    );
  }
}

/** The paper this browser printed on last, else the one its locale uses. */
function savedPaper(): Paper {
  try {
    const p = localStorage.getItem('nullbench.paper');
    if (p === 'a4' || p === 'letter') return p;
  } catch {
    // No storage: the locale decides.
  }
  return paperForLocale(navigator.language);
}
