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

/**
 * A moment in the bench's own time, with its zone so nobody mistakes it for another: "2026-03-17 20:30
 * CET". Dates stay year-month-day whatever the locale (the sheet and the CSV use the same order).
 */
export function when(iso: string, timeZone?: string): string {
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  const parts = new Intl.DateTimeFormat('en-US', {
    timeZone,
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    hourCycle: 'h23',
    timeZoneName: 'short',
  }).formatToParts(d);
  const p = (t: Intl.DateTimeFormatPartTypes) => parts.find((x) => x.type === t)?.value ?? '';
  return `${p('year')}-${p('month')}-${p('day')} ${p('hour')}:${p('minute')} ${p('timeZoneName')}`;
}
