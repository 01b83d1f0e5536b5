// Runs in the renderer. Small pieces the record-keeping views share: labelled fields, verdict badges,
// figures as text, file downloads, and bundle import in parts (a web request carries at most ~2 MB).
import type { ServiceClient } from '../../app/api';
import type { ImportSummary } from '../../app/bundle';
import { K_EXPANDED, type Figure } from '../../app/analysis';
import { BUNDLE_KINDS } from '../../app/bundle';
import { VERDICT_LABELS, type RuleStatus } from '../../app/limits';
import { h } from '../dom';
import type { CsvSeparator } from '../../app/csv';

export function field(label: string, input: HTMLElement, cls = ''): HTMLLabelElement {
  return h('label', { class: cls }, label, input);
}

export function badge(status: RuleStatus | 'not-applicable'): HTMLSpanElement {
  return h('span', { class: `verdict v-${status}` }, VERDICT_LABELS[status]);
}

export function f1(x: number): string {
  const s = Math.abs(x).toFixed(1);
  return `${x < 0 && Number(s) !== 0 ? '−' : ''}${s}`;
}

/** "58.0 ± 1.6 dB" (expanded, k = 2); "≥ 72.0 dB" with its uncertainty when the floor limited it. */
export function figureText(f: Figure | null | undefined, signed = false): string {
  if (!f) return '—';
  if (f.bound === 'unknown') return 'not stated (reference at the floor)';
  const v = signed && f.value >= 0 ? `+${f1(f.value)}` : f1(f.value);
  return `${f.bound === 'atLeast' ? '≥ ' : ''}${v} ± ${f1(K_EXPANDED * f.u)} dB`;
}

/** Offers data as a file download. */
export function download(fileName: string, data: BlobPart, type: string): void {
  const url = URL.createObjectURL(new Blob([data], { type }));
  const a = h('a', { href: url, download: fileName, class: 'hidden-link' });
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

export function base64Bytes(b64: string): Uint8Array<ArrayBuffer> {
  const bin = atob(b64);
  const out = new Uint8Array(bin.length);
  for (let i = 0; i < bin.length; i++) out[i] = bin.charCodeAt(i);
  return out;
}

const PART_CHARS = 512 * 1024;

/** Sends a bundle's text in parts and returns the import's summary (the server merges in one transaction). */
export async function importBundleText(api: ServiceClient, text: string): Promise<ImportSummary> {
  const uploadId = `up${Date.now().toString(36)}${Math.random().toString(36).slice(2, 10)}`;
  const parts = Math.max(1, Math.ceil(text.length / PART_CHARS));
  let summary: ImportSummary | null = null;
  for (let i = 0; i < parts; i++)
    summary = await api.call('importBundlePart', {
      uploadId,
      part: i,
      parts,
      text: text.slice(i * PART_CHARS, (i + 1) * PART_CHARS),
    });
  if (!summary) throw new Error('the import did not finish');
  return summary;
}

export function importSummaryText(s: ImportSummary): string {
  const added = BUNDLE_KINDS.filter((k) => s.added[k]).map((k) => `${s.added[k]} ${k}`);
  const same = BUNDLE_KINDS.filter((k) => s.unchanged[k]).map((k) => `${s.unchanged[k]} ${k}`);
  const extra = [...s.matchedByName, ...s.keptLocal];
  return (
    `Imported: added ${added.join(', ') || 'nothing'}; already here ${same.join(', ') || 'nothing'}.` +
    (extra.length ? ` ${extra.join('; ')}.` : '')
  );
}

/** A file chooser button that hands the chosen file's text to `onText`. */
export function fileButton(
  label: string,
  accept: string,
  id: string,
  onText: (text: string, name: string) => void,
): HTMLElement {
  const input = h('input', { type: 'file', accept, id, class: 'file-input' });
  input.addEventListener('change', () => {
    const f = input.files?.[0];
    if (!f) return;
    void f.text().then((t) => {
      input.value = '';
      onText(t, f.name);
    });
  });
  return h('label', { class: 'file-button', for: id }, label, input);
}

/** The CSV dialect this browser uses: the one chosen last, else the one its locale's decimal mark needs. */
export function csvSeparator(): CsvSeparator {
  try {
    const saved = localStorage.getItem('nullbench.csvSeparator');
    if (saved === 'comma' || saved === 'semicolon') return saved;
  } catch {
    // No storage: fall back to the locale.
  }
  return new Intl.NumberFormat(navigator.language).format(1.5).includes(',') ? 'semicolon' : 'comma';
}

/** The choice of CSV dialect, kept for the next export. */
export function csvSeparatorChoice(): HTMLSelectElement {
  const sel = h(
    'select',
    {
      name: 'csv-separator',
      'aria-label': 'CSV separator',
      title:
        'Semicolon-separated files with a decimal comma open right in spreadsheets set to a decimal-comma locale',
      onchange: () => {
        try {
          localStorage.setItem('nullbench.csvSeparator', sel.value);
        } catch {
          // Not kept; this export still uses it.
        }
      },
    },
    h('option', { value: 'comma' }, 'CSV: comma, decimal point'),
    h('option', { value: 'semicolon' }, 'CSV: semicolon, decimal comma'),
  );
  sel.value = csvSeparator();
  return sel;
}

/** Downloads readings as CSV in the chosen dialect. */
export function downloadCsv(
  api: ServiceClient,
  scope: { designId?: string; unitId?: string; sessionId?: string },
  onError: (e: Error) => void,
): void {
  void api
    .call('exportCsv', { ...scope, separator: csvSeparator() })
    .then((r) => download(r.fileName, r.csv, 'text/csv;charset=utf-8'), onError);
}
