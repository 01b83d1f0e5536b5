// Runs in the renderer. The live spectrum around the carrier: the trace the main side measured and thinned
// (never an FFT here), the measured components marked with their levels, the suppression (a bound when
// the floor limits it), the SDR's dBm at 0 dBFS, and one action that keeps the measurement in the session.
import type { ServiceClient, SpectrumComponent, SpectrumFrame, SpectrumRatio } from '../../app/api';
import { ROLE_LABELS } from '../../app/api';
import { h } from '../dom';
import { dbm } from '../format';
import { numberInput, readNumber } from '../numinput';
import { emptyNote } from '../charts';

type Notify = (level: 'info' | 'warn' | 'error', msg: string) => void;

/** Short labels drawn beside the markers. */
const MARK: Record<SpectrumComponent['role'], string> = {
  carrier: 'C',
  upper: 'U',
  lower: 'L',
  imd3u: '3u',
  imd3l: '3l',
  imd5u: '5u',
  imd5l: '5l',
};

/** "42.3 dB ± 0.2" or "≥ 62.0 dB" (suppression: at least) / "≤ −60.0 dBc" (products: at most). */
export function ratioText(r: SpectrumRatio | null, unit: string, boundSign: '≥' | '≤'): string {
  if (!r) return '—';
  if (r.floorLimited) return `${boundSign} ${dbm(r.db)} ${unit}`;
  return `${dbm(r.db)} ${unit}${r.uDb !== null ? ` ± ${r.uDb.toFixed(r.uDb < 0.1 ? 2 : 1)}` : ''}`;
}

function levelText(c: SpectrumComponent, v: number | null, unit: string): string {
  if (v === null) return '—';
  return `${c.floorLimited ? '≤ ' : ''}${dbm(v)} ${unit}`;
}

export class SpectrumPanel {
  private readonly root: HTMLElement;
  private readonly canvas: HTMLCanvasElement;
  private box!: HTMLElement;
  private readonly supp: HTMLElement;
  private readonly imd: HTMLElement;
  private readonly info: HTMLElement;
  private readonly table: HTMLTableSectionElement;
  private readonly startBtn: HTMLButtonElement;
  private readonly keepBtn: HTMLButtonElement;
  private readonly sourceIn: HTMLInputElement;
  private readonly fsIn: HTMLInputElement;
  private readonly genIn: HTMLInputElement;
  private readonly padIn: HTMLInputElement;
  private frame: SpectrumFrame | null = null;
  private pending = false;
  private running = false;
  private off: (() => void) | null = null;
  private offNotice: (() => void) | null = null;

  constructor(
    private readonly api: ServiceClient,
    private readonly sessionId: string,
    private readonly notify: Notify,
  ) {
    this.canvas = h('canvas', {
      class: 'spectrum-canvas',
      id: 'spectrum-canvas',
      width: 720,
      height: 280,
      role: 'img',
      'aria-label': 'spectrum around the carrier: not started',
    });
    this.supp = h('b', { id: 'spectrum-suppression' }, '—');
    this.imd = h('span', { id: 'spectrum-imd3' }, '—');
    this.info = h('p', { class: 'hint', id: 'spectrum-info' }, 'Stopped.');
    this.table = h('tbody', { id: 'spectrum-levels' });
    this.sourceIn = h('input', {
      name: 'iq-source',
      value: 'iqsim',
      size: 18,
      title: 'iqsim, or iq:HOST:PORT',
    });
    this.startBtn = h(
      'button',
      { type: 'button', id: 'spectrum-start', onclick: () => void this.toggle() },
      'Start',
    );
    this.keepBtn = h(
      'button',
      {
        type: 'button',
        class: 'primary',
        id: 'spectrum-keep',
        disabled: true,
        onclick: () => void this.keep(),
      },
      'Keep this measurement',
    );
    this.fsIn = numberInput({ name: 'full-scale', size: 7, placeholder: 'dBm' });
    this.genIn = numberInput({ name: 'gen-dbm', size: 7, placeholder: 'dBm' });
    this.padIn = numberInput({ name: 'pad-db', size: 6, placeholder: 'dB' });
    this.root = h(
      'section',
      { class: 'card spectrum', id: 'spectrum-card' },
      h('h2', {}, 'Spectrum around the carrier (SDR)'),
      h('div', { class: 'row' }, h('label', {}, 'IQ stream ', this.sourceIn), this.startBtn, this.keepBtn),
      h(
        'p',
        { class: 'spectrum-figures' },
        'Carrier suppression ',
        this.supp,
        h('span', { class: 'hint' }, '  (mean of the two tones over the carrier)  '),
        'IMD3 ',
        this.imd,
      ),
      (this.box = h('div', { class: 'chart-box spectrum-box' }, this.canvas)),
      this.info,
      h(
        'table',
        { class: 'spectrum-table' },
        h(
          'thead',
          {},
          h(
            'tr',
            {},
            h('th', {}, 'Point'),
            h('th', {}, 'Offset'),
            h('th', {}, 'dBFS'),
            h('th', {}, 'At the transmitter'),
          ),
        ),
        this.table,
      ),
      h(
        'div',
        { class: 'row' },
        h('label', {}, 'dBm at 0 dBFS ', this.fsIn),
        h(
          'button',
          { type: 'button', id: 'spectrum-set-fs', onclick: () => void this.setFullScale() },
          'Set',
        ),
        h('span', { class: 'hint' }, 'or inject'),
        h('label', {}, 'generator ', this.genIn),
        h('label', {}, 'through pad ', this.padIn),
        h(
          'button',
          { type: 'button', id: 'spectrum-inject', onclick: () => void this.inject() },
          'Calibrate',
        ),
      ),
      h(
        'p',
        { class: 'hint' },
        'Mind the SDR input: most take no more than a few milliwatts. Put enough attenuation ahead of it and ' +
          'watch for the overload warning.',
      ),
    );
    emptyNote(
      this.box,
      'Press Start to see the spectrum around the carrier from the IQ stream named beside it (iqsim is the built-in simulated SDR).',
    );
  }

  element(): HTMLElement {
    return this.root;
  }

  private listen(): void {
    // The stream stopped on the main side (server gone, link broken): the notice says why; show it stopped.
    this.offNotice ??= this.api.listen('notice', (n) => {
      if (!this.root.isConnected || !n.message.startsWith('spectrum:')) return;
      this.running = false;
      this.startBtn.textContent = 'Start';
      this.keepBtn.disabled = true;
      this.info.textContent = `Stopped: ${n.message.slice('spectrum:'.length).trim()}`;
    });
    this.off ??= this.api.listen('spectrum', (f) => {
      // The bench view redraws on a new session: a panel no longer shown stops listening.
      if (!this.root.isConnected) {
        this.off?.();
        this.off = null;
        this.offNotice?.();
        this.offNotice = null;
        return;
      }
      if (f.sessionId !== this.sessionId) return;
      this.frame = f;
      if (!this.pending) {
        this.pending = true;
        requestAnimationFrame(() => {
          this.pending = false;
          this.render();
        });
      }
    });
  }

  private async toggle(): Promise<void> {
    this.startBtn.disabled = true;
    try {
      if (this.running) {
        await this.api.call('spectrumStop', {});
        this.running = false;
        this.info.textContent = 'Stopped.';
      } else {
        this.listen();
        const s = await this.api.call('spectrumStart', { source: this.sourceIn.value.trim() });
        this.running = s.running;
        if (s.calibration) this.fsIn.value = s.calibration.dbmAtFullScale.toFixed(1);
        this.info.textContent = `Reading ${s.source ?? ''}…`;
      }
    } catch (e) {
      this.notify('error', (e as Error).message);
    } finally {
      this.startBtn.disabled = false;
      this.startBtn.textContent = this.running ? 'Stop' : 'Start';
      this.keepBtn.disabled = !this.running;
    }
  }

  private async setFullScale(): Promise<void> {
    try {
      const v = readNumber(this.fsIn, 'dBm at 0 dBFS', { unit: 'dBm' });
      const c = await this.api.call('spectrumCalibrate', { dbmAtFullScale: v });
      this.notify('info', `0 dBFS = ${dbm(c.dbmAtFullScale)} dBm (± ${c.uDb.toFixed(1)} dB) from now on`);
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private async inject(): Promise<void> {
    try {
      const gen = readNumber(this.genIn, 'reference injection: generator level', { unit: 'dBm' });
      const pad = readNumber(this.padIn, 'reference injection: pad', { unit: 'dB', min: 0 });
      const c = await this.api.call('spectrumCalibrate', { injection: { generatorDbm: gen, padDb: pad } });
      this.fsIn.value = c.dbmAtFullScale.toFixed(1);
      this.notify(
        'info',
        `from the injection: 0 dBFS = ${dbm(c.dbmAtFullScale)} dBm (± ${c.uDb.toFixed(1)} dB)`,
      );
    } catch (e) {
      this.notify('error', (e as Error).message);
    }
  }

  private async keep(): Promise<void> {
    this.keepBtn.disabled = true;
    try {
      const kept = await this.api.call('spectrumKeep', { note: '' });
      const c = kept.find((r) => r.role === 'carrier');
      this.notify(
        'info',
        `kept ${kept.length} readings${c ? `: carrier ${c.floorLimited ? '≤ ' : ''}${dbm(c.dbmDut)} dBm at the transmitter` : ''}`,
      );
      this.root.dispatchEvent(new CustomEvent('spectrum-kept', { bubbles: true, detail: kept }));
    } catch (e) {
      this.notify('error', (e as Error).message);
    } finally {
      this.keepBtn.disabled = !this.running;
    }
  }

  private render(): void {
    const f = this.frame;
    if (!f) return;
    this.supp.textContent = ratioText(f.suppression, 'dB', '≥');
    this.supp.classList.toggle('bound', f.suppression?.floorLimited ?? false);
    this.imd.textContent = ratioText(f.imd3, 'dBc', '≤');
    // The picture in words, for assistive tools (a canvas has no text of its own).
    this.canvas.setAttribute(
      'aria-label',
      `spectrum around the carrier from ${f.source}: carrier suppression ${this.supp.textContent}, IMD3 ${this.imd.textContent}; the levels are in the table below`,
    );
    this.info.textContent =
      `${f.source}: ${(f.sampleRate / 1e3).toFixed(0)} kS/s, FFT ${f.fftSize} (${f.binHz.toFixed(1)} Hz bins, flat-top), ` +
      `${f.averages} averages; floor ${dbm(f.noiseFloorDbfs)} dBFS per bin` +
      (f.overload ? ' — OVERLOAD: the SDR input clips, add attenuation' : '');
    this.info.classList.toggle('warn', f.overload);
    const rows = f.components
      .filter((c) => c.inBand)
      .map((c) =>
        h(
          'tr',
          { class: c.floorLimited ? 'bound' : '' },
          h('td', {}, ROLE_LABELS[c.role]),
          h('td', {}, `${c.offsetHz >= 0 ? '+' : '−'}${Math.abs(c.offsetHz).toFixed(0)} Hz`),
          h('td', {}, levelText(c, c.dbfs, 'dBFS')),
          h('td', {}, levelText(c, c.dbmDut, 'dBm')),
        ),
      );
    this.table.replaceChildren(...rows);
    this.draw(f);
  }

  private draw(f: SpectrumFrame): void {
    const cv = this.canvas;
    emptyNote(this.box, null);
    const w = Math.max(320, Math.round(cv.clientWidth || 720));
    const hgt = 280;
    if (cv.width !== w) cv.width = w;
    if (cv.height !== hgt) cv.height = hgt;
    const g = cv.getContext('2d');
    if (!g) return;
    const css = getComputedStyle(document.documentElement);
    const col = (v: string) => css.getPropertyValue(v).trim() || '#ccc';
    const left = 48;
    const right = 12;
    const top = 14;
    const bottom = 26;
    const span = f.traceHz.length
      ? Math.max(Math.abs(f.traceHz[0]), Math.abs(f.traceHz[f.traceHz.length - 1]))
      : f.toneHz * 6;
    const yTop = 0;
    const yBot = Math.min(-40, Math.floor((f.noiseFloorDbfs - 12) / 10) * 10);
    const x = (hz: number) => left + ((hz + span) / (2 * span)) * (w - left - right);
    const y = (d: number) =>
      top + ((yTop - Math.max(yBot, Math.min(yTop, d))) / (yTop - yBot)) * (hgt - top - bottom);
    g.clearRect(0, 0, w, hgt);
    g.font = '11px DejaVu Sans, sans-serif';
    g.lineWidth = 1;
    g.strokeStyle = col('--line');
    g.fillStyle = col('--muted');
    g.textAlign = 'right';
    g.textBaseline = 'middle';
    for (let d = yTop; d >= yBot; d -= 10) {
      g.beginPath();
      g.moveTo(left, y(d));
      g.lineTo(w - right, y(d));
      g.stroke();
      g.fillText(`${d}`, left - 4, y(d));
    }
    g.textAlign = 'center';
    g.textBaseline = 'top';
    for (let k = -6; k <= 6; k++) {
      const hz = k * f.toneHz;
      if (Math.abs(hz) > span) continue;
      g.beginPath();
      g.moveTo(x(hz), top);
      g.lineTo(x(hz), hgt - bottom);
      g.stroke();
      g.fillText(
        k === 0 ? 'carrier' : `${k > 0 ? '+' : '−'}${(Math.abs(hz) / 1000).toFixed(1)} k`,
        x(hz),
        hgt - bottom + 6,
      );
    }
    g.save();
    g.translate(10, top + (hgt - top - bottom) / 2);
    g.rotate(-Math.PI / 2);
    g.fillText('dBFS', 0, -4);
    g.restore();

    // Noise floor per bin, dashed.
    g.setLineDash([4, 4]);
    g.strokeStyle = col('--muted');
    g.beginPath();
    g.moveTo(left, y(f.noiseFloorDbfs));
    g.lineTo(w - right, y(f.noiseFloorDbfs));
    g.stroke();
    g.setLineDash([]);

    g.strokeStyle = col('--sky');
    g.beginPath();
    f.traceHz.forEach((hz, i) => {
      const px = x(hz);
      const py = y(f.traceDbfs[i]);
      if (i === 0) g.moveTo(px, py);
      else g.lineTo(px, py);
    });
    g.stroke();

    g.textBaseline = 'bottom';
    for (const c of f.components) {
      if (!c.inBand || c.dbfs === null) continue;
      const colour =
        c.role === 'carrier'
          ? col('--amber')
          : c.role === 'upper' || c.role === 'lower'
            ? col('--mint')
            : col('--rose');
      const px = x(c.offsetHz);
      const py = y(c.dbfs);
      g.fillStyle = colour;
      g.strokeStyle = colour;
      g.beginPath();
      // A bound is an open marker: the level is at most there.
      g.moveTo(px, py - 2);
      g.lineTo(px - 5, py - 11);
      g.lineTo(px + 5, py - 11);
      g.closePath();
      if (c.floorLimited) g.stroke();
      else g.fill();
      g.fillText(`${MARK[c.role]} ${c.floorLimited ? '≤' : ''}${dbm(c.dbfs)}`, px, py - 13);
    }
  }
}
