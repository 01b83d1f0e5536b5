// Runs in the renderer. Two ways to follow the level without looking closely: the far view (the level
// across the whole window, large enough to read from the other side of the bench) and the null tone (a
// tone whose pitch follows the level, for when the eyes are on the trimmer).
import type { LiveReading } from '../../app/api';
import { h } from '../dom';
import { dbm } from '../format';
import { tonePitch } from '../../app/tone';

export class FarView {
  private readonly root: HTMLElement;
  private readonly level: HTMLElement;
  private readonly state: HTMLElement;
  private readonly point: HTMLElement;
  private back: HTMLButtonElement;
  private opener: Element | null = null;

  constructor() {
    this.level = h('div', { class: 'far-level', id: 'far-level' }, '—');
    this.state = h('div', { class: 'far-state' }, 'waiting for the first reading');
    this.point = h('div', { class: 'far-point' });
    this.back = h(
      'button',
      { type: 'button', id: 'far-view-close', onclick: () => this.close() },
      'Back to the bench (Esc)',
    );
    this.root = h(
      'div',
      {
        class: 'far-view',
        id: 'far-view',
        role: 'dialog',
        'aria-modal': 'true',
        'aria-label': 'Far view of the level',
        hidden: true,
      },
      this.point,
      this.level,
      this.state,
      h('div', { class: 'far-foot' }, h('span', { class: 'hint' }, 'K keeps the reading'), this.back),
    );
    this.root.addEventListener('keydown', (e) => {
      if (e.key === 'Escape') {
        e.preventDefault();
        this.close();
      }
    });
  }

  element(): HTMLElement {
    return this.root;
  }

  open(): void {
    this.opener = document.activeElement;
    this.root.hidden = false;
    this.back.focus();
  }

  close(): void {
    this.root.hidden = true;
    if (this.opener instanceof HTMLElement) this.opener.focus();
  }

  isOpen(): boolean {
    return !this.root.hidden;
  }

  show(r: LiveReading, point: string): void {
    if (this.root.hidden) return;
    this.level.textContent = `${dbm(r.dbmDut)} dBm`;
    this.point.textContent = `${point} · at the transmitter · ± ${(2 * r.uDb).toFixed(1)} dB (k=2)`;
    this.state.textContent = r.settled ? 'steady' : 'settling';
    this.root.classList.toggle('steady', r.settled);
  }
}

export class NullTone {
  private ctx: AudioContext | null = null;
  private osc: OscillatorNode | null = null;
  private gain: GainNode | null = null;
  private ref: number | null = null;
  private readonly btn: HTMLButtonElement;

  constructor() {
    this.btn = h(
      'button',
      {
        type: 'button',
        class: 'ghost small',
        id: 'null-tone',
        'aria-pressed': 'false',
        title: 'A tone whose pitch follows the level: lower is deeper (a semitone per dB)',
        onclick: () => this.toggle(),
      },
      'Null tone',
    );
  }

  button(): HTMLButtonElement {
    return this.btn;
  }

  private toggle(): void {
    if (this.osc) {
      this.osc.stop();
      void this.ctx?.close();
      this.ctx = this.osc = this.gain = null;
      this.ref = null;
      this.btn.setAttribute('aria-pressed', 'false');
      delete this.btn.dataset.hz;
      return;
    }
    const Ctx = window.AudioContext;
    if (!Ctx) return;
    this.ctx = new Ctx();
    this.osc = this.ctx.createOscillator();
    this.gain = this.ctx.createGain();
    this.gain.gain.value = 0.06;
    this.osc.type = 'sine';
    this.osc.connect(this.gain).connect(this.ctx.destination);
    this.osc.start();
    this.btn.setAttribute('aria-pressed', 'true');
  }

  follow(levelDbm: number): void {
    if (!this.osc || !this.ctx || !Number.isFinite(levelDbm)) return;
    const p = tonePitch(levelDbm, this.ref ?? levelDbm);
    this.ref = p.refDbm;
    // A short glide, so the pitch moves with the trimmer without clicks.
    this.osc.frequency.setTargetAtTime(p.hz, this.ctx.currentTime, 0.03);
    this.btn.dataset.hz = p.hz.toFixed(1);
  }
}
