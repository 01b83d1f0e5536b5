// Runs in the renderer. How numbers are shown: fixed decimals, a real minus sign, units always named.
import { formatS, iaruR1Scale } from '../app/levels';

export function dbm(x: number | null | undefined, digits = 1): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return '—';
  return `${x < 0 ? '−' : ''}${Math.abs(x).toFixed(digits)}`;
}

export function signed(x: number, digits = 1): string {
  return `${x < 0 ? '−' : '+'}${Math.abs(x).toFixed(digits)}`;
}

export function sUnits(dbmRx: number, freqHz: number): string {
  return formatS(dbmRx, iaruR1Scale(freqHz));
}

export function mhz(hz: number): string {
  return `${(hz / 1e6).toFixed(4)} MHz`;
}

export function when(iso: string): string {
  const d = new Date(iso);
  return `${d.toISOString().slice(0, 10)} ${d.toISOString().slice(11, 16)}`;
}
