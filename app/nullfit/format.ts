// Runs anywhere (app/ is runtime-free). Numbers for people at the bench: as many digits as the
// uncertainty supports, a real minus sign, units placed the way they are written.

/** U+2212, the typographic minus: "−12°" reads better than "-12°" and is what a test sheet prints. */
export const MINUS = '\u2212';

/**
 * Rounding step that shows about two significant digits of an uncertainty `halfWidth` (a CI half-width);
 * without a finite uncertainty, three significant digits of `magnitude`.
 */
export function roundingStep(halfWidth: number, magnitude: number): number {
  if (Number.isFinite(halfWidth) && halfWidth > 0) return Math.pow(10, Math.floor(Math.log10(halfWidth / 2)));
  const m = Math.abs(magnitude);
  if (!(m > 0) || !Number.isFinite(m)) return 1;
  return Math.pow(10, Math.floor(Math.log10(m)) - 2);
}

export function roundTo(x: number, step: number): number {
  const r = Math.round(x / step) * step;
  // Strip binary dust (0.35000000000000003) so that what we print is what we return.
  const decimals = Math.max(0, Math.min(12, -Math.floor(Math.log10(step))));
  return Number(r.toFixed(decimals));
}

/** Fixed-point text of x at `step` resolution, with a typographic minus. */
export function fixed(x: number, step: number): string {
  const decimals = Math.max(0, Math.min(12, -Math.floor(Math.log10(step))));
  const s = roundTo(x, step).toFixed(decimals);
  return s.startsWith('-') ? MINUS + s.slice(1) : s;
}

/** Signed amount with its unit: "+0.35 turns", "−12°". */
export function signedAmount(x: number, step: number, unit: string): string {
  const body = fixed(Math.abs(x), step);
  const sign = x < 0 ? MINUS : '+';
  return `${sign}${body}${unitSuffix(unit)}`;
}

export function unitSuffix(unit: string): string {
  if (!unit) return '';
  // Degree, minute and percent signs sit on the number; word units get a space.
  return /^[°′″'"%]/.test(unit) ? unit : ` ${unit}`;
}

/** A level in dBm to 0.1 dB: "−71.3 dBm". */
export function dbm(x: number): string {
  return `${fixed(x, 0.1)} dBm`;
}

/** A dB amount to 0.1 dB, unsigned: "1.3 dB". */
export function db(x: number): string {
  return `${fixed(x, 0.1)} dB`;
}
