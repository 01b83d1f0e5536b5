// Runs in Node (pure string building). Lays the sheet model out as HTML: one <article class="sheet"> that
// the app shows with sheet.css, and a whole document with that stylesheet inlined for printing to PDF.
// Every text is escaped; no inline style attributes (the app's CSP forbids them), only classes.
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { VERDICT_LABELS, type RuleStatus } from '../../app/limits';
import { appRoot, rendererDir } from '../paths';
import type { SheetModel } from './model';
import { esc, nullChartSvg, planChartSvg } from './svg';

const f1 = (x: number) => {
  const s = Math.abs(x).toFixed(1);
  return `${x < 0 && Number(s) !== 0 ? '−' : ''}${s}`;
};
const f2 = (x: number) => {
  const s = Math.abs(x).toFixed(2);
  return `${x < 0 && Number(s) !== 0 ? '−' : ''}${s}`;
};
const dbm = (x: number) => `${x >= 0 ? '+' : ''}${f1(x)} dBm`;
const mhz = (hz: number) => `${(hz / 1e6).toFixed(hz % 1000 === 0 ? 3 : 6)} MHz`;
const date = (iso: string | null) => (iso ? `${iso.slice(0, 10)} ${iso.slice(11, 16)} UTC` : '—');
const txt = (s: string, empty = '—') => (s.trim() ? esc(s) : `<span class="sh-muted">${empty}</span>`);

function badge(status: RuleStatus | 'not-applicable'): string {
  return `<span class="sh-badge sh-${status}">${VERDICT_LABELS[status]}</span>`;
}

function kv(rows: [string, string][]): string {
  return `<table class="sh-kv"><tbody>${rows.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${v}</td></tr>`).join('')}</tbody></table>`;
}

function watts(dbmValue: number): string {
  const w = 10 ** (dbmValue / 10) / 1000;
  return w >= 1 ? `${w.toPrecision(3)} W` : `${(w * 1000).toPrecision(3)} mW`;
}

/** The sheet alone: an <article class="sheet">. */
export function sheetFragment(m: SheetModel): string {
  const id = m.identity;
  const su = m.setup;
  const out: string[] = [];
  out.push('<article class="sheet">');
  out.push(`<header class="sh-head">
  <div class="sh-brand">Nullbench · transmitter test sheet</div>
  <div class="sh-title"><h1>${esc(id.serial)}</h1><div class="sh-sub">${esc(id.design)} · revision ${esc(id.revision)}</div></div>
  <div class="sh-overall">${badge(m.overall)}<div class="sh-ref">Sheet ${esc(m.sheetRef)}<br/>issued ${esc(date(m.issuedAt))}</div></div>
</header>`);

  out.push('<section class="sh-two">');
  out.push(
    `<div><h2>Unit</h2>${kv([
      ['Serial', esc(id.serial)],
      ['Design', esc(id.design)],
      ['Revision', esc(id.revision)],
      ['What changed', txt(id.revisionChanges)],
      ['Built', `${txt(id.buildDate, 'date not recorded')}${id.builder ? ` by ${esc(id.builder)}` : ''}`],
      ['Unit notes', txt(id.unitNotes)],
    ])}</div>`,
  );
  out.push(
    `<div><h2>Session</h2>${kv([
      ['Measured', esc(date(m.session.startedAt))],
      ['Ended', esc(date(m.session.endedAt))],
      ['Operator', txt(m.session.operator, 'not recorded')],
      ['Emission', esc(m.session.emission)],
      ['Kept readings', String(m.session.keptCount)],
      ['Session notes', txt(m.session.notes)],
    ])}</div>`,
  );
  out.push('</section>');

  out.push('<section><h2>Bench set-up</h2><div class="sh-two">');
  out.push(
    kv([
      ['Receiver', `${esc(su.receiver)} <span class="sh-muted">(${esc(su.source)})</span>`],
      ['Bandwidth', `${su.bandwidthHz} Hz`],
      ['Rated max input', dbm(su.maxInputDbm)],
      ['Calibration', `${esc(su.calibration)}`],
      ['Calibrated on', esc(su.calibrationDate)],
      ['Calibration u', `${f2(su.calibrationU)} dB (k = 1)`],
    ]),
  );
  out.push(
    kv([
      ['Carrier', mhz(su.carrierHz)],
      ['Audio tone', `${su.toneHz} Hz`],
      ['Declared PEP', `${dbm(su.txPepDbm)} (${watts(su.txPepDbm)})`],
      ['Receiver input at PEP', `${dbm(su.rxPepDbm)} (rated max ${dbm(su.maxInputDbm)})`],
      [
        'Trimmers (final)',
        su.trims
          .map((t) => `${esc(t.label)} ${t.final === null ? '—' : Number(t.final.toFixed(3))} ${esc(t.unit)}`)
          .join('; '),
      ],
    ]),
  );
  out.push('</div>');
  out.push(
    `<table class="sh-grid sh-path"><thead><tr><th>Signal path, transmitter → receiver</th><th class="n">loss (dB)</th><th class="n">u (dB, k = 1)</th></tr></thead><tbody>${su.path
      .map(
        (p) =>
          `<tr><td>${esc(p.label)}</td><td class="n">${f2(p.lossDb)}</td><td class="n">${f2(p.uDb)}</td></tr>`,
      )
      .join(
        '',
      )}<tr class="sh-total"><td>total</td><td class="n">${f2(su.pathLossDb)}</td><td class="n">${f2(su.pathUDb)}</td></tr></tbody></table>`,
  );
  out.push('</section>');

  out.push(
    `<section><h2>Results</h2><p class="sh-note">Stated reference for carrier suppression: <b>${esc(m.referenceLabel)}</b>. One tone ${esc(m.levels.tone)}; PEP ${esc(m.levels.pep)}; mean power ${esc(m.levels.mean)}; receiver floor ${esc(m.levels.floor)} (levels at the transmitter output, ± expanded).</p>`,
  );
  out.push(
    `<table class="sh-grid sh-results"><thead><tr><th>Figure</th><th class="n">Result</th><th class="n">Uncertainty (k = 2)</th><th>Remarks</th></tr></thead><tbody>${m.figures
      .map(
        (r) =>
          `<tr class="${r.stated ? 'sh-stated' : ''}"><td>${esc(r.label)}${r.stated ? ' <span class="sh-tag">stated</span>' : ''}</td><td class="n">${esc(r.value)}</td><td class="n">${esc(r.expanded)}</td><td class="sh-small">${esc(r.note)}</td></tr>`,
      )
      .join('')}</tbody></table>`,
  );
  if (m.warnings.length)
    out.push(`<ul class="sh-warn">${m.warnings.map((w) => `<li>${esc(w)}</li>`).join('')}</ul>`);
  out.push('</section>');

  out.push('<section class="sh-verdicts"><h2>Verdicts</h2>');
  if (!m.verdicts.length) out.push('<p class="sh-note">No limit set was chosen for this sheet.</p>');
  for (const v of m.verdicts) {
    out.push(`<div class="sh-set">
<div class="sh-set-head">${badge(v.overall)}<div><b>${esc(v.setName)}</b> <span class="sh-tag">${esc(v.standingLabel)}</span><div class="sh-small">${esc(v.source)}</div></div></div>
<table class="sh-grid"><thead><tr><th>Check</th><th class="n">Measured</th><th class="n">Limit</th><th>Verdict</th><th>Why</th></tr></thead><tbody>${v.outcomes
      .map(
        (o) =>
          `<tr><td>${esc(o.label)}</td><td class="n">${esc(o.measured || '—')}</td><td class="n">${esc(o.limit || '—')}</td><td>${badge(o.status)}</td><td class="sh-small">${esc(o.reason)}</td></tr>`,
      )
      .join('')}</tbody></table>
<div class="sh-small sh-muted">${esc(v.reason)}.</div></div>`);
  }
  out.push('</section>');

  out.push('<section class="sh-charts"><h2>Carrier null and measured points</h2><div class="sh-chartrow">');
  for (const c of m.nullCharts)
    out.push(
      `<figure>${nullChartSvg({
        title: `Carrier against ${c.trim.label}`,
        xLabel: `${c.trim.label} (${c.trim.unit})`,
        yLabel: 'carrier at transmitter (dBm)',
        series: c.series,
        final: c.final,
      })}</figure>`,
    );
  if (!m.nullCharts.length) out.push('<p class="sh-note">No trimmer pass was kept in this session.</p>');
  out.push('</div>');
  if (m.plan.points.length)
    out.push(
      `<figure class="sh-wide">${planChartSvg({
        title: 'Measured points around the carrier (last kept reading of each)',
        toneHz: m.plan.toneHz,
        points: m.plan.points,
        lines: m.plan.lines,
      })}</figure>`,
    );
  out.push('</section>');

  out.push(
    `<section class="sh-points"><h2>Measured points</h2><table class="sh-grid"><thead><tr><th>Point</th><th class="n">Frequency</th><th class="n">Level at transmitter</th><th class="n">± (k = 2)</th><th class="n">Time (UTC)</th><th>Flags</th></tr></thead><tbody>${m.points
      .map(
        (p) =>
          `<tr><td>${esc(p.label)}</td><td class="n">${mhz(p.freqHz)}</td><td class="n">${p.flags.includes('floor') ? '≤ ' : ''}${dbm(p.dbm)}</td><td class="n">${f1(p.expandedDb)} dB</td><td class="n">${esc(p.at)}</td><td class="sh-small">${esc(p.flags)}</td></tr>`,
      )
      .join('')}</tbody></table></section>`,
  );

  out.push(`<section class="sh-two sh-end"><div><h2>Notes</h2><p>${txt(m.notes, 'none')}</p><p class="sh-small">${esc(m.uncertaintyNote)}</p></div>
<div><h2>Cautions</h2><ul class="sh-cautions">${m.cautions.map((c) => `<li>${esc(c)}</li>`).join('')}</ul></div></section>`);
  out.push(
    `<footer class="sh-foot"><span>Tested by: ______________________</span><span>Signature: ______________________</span><span>Session ${esc(m.session.id)}</span></footer>`,
  );
  out.push('</article>');
  return out.join('\n');
}

let cssCache: string | null = null;

/** sheet.css: from the built renderer, or from the sources when run unbuilt. */
export function sheetCss(): string {
  if (cssCache !== null) return cssCache;
  const candidates = [join(rendererDir(), 'sheet.css'), join(appRoot(), 'renderer', 'sheet.css')];
  const file = candidates.find((f) => existsSync(f));
  if (!file) throw new Error(`sheet.css not found (looked in ${candidates.join(', ')})`);
  cssCache = readFileSync(file, 'utf8');
  return cssCache;
}

/** A whole printable document with the stylesheet inlined. */
export function sheetDocument(m: SheetModel): string {
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"/><title>${esc(m.title)}</title>
<style>${sheetCss()}</style></head>
<body class="sheet-print paper-${m.paper}">${sheetFragment(m)}</body></html>
`;
}
