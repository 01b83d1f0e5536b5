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

const EIGHTHS = [
  '',
  'an eighth of a turn',
  'a quarter turn',
  'three eighths of a turn',
  'half a turn',
  'five eighths of a turn',
  'three quarters of a turn',
  'seven eighths of a turn',
];

const PARTS = [
  '',
  'an eighth',
  'a quarter',
  'three eighths',
  'a half',
  'five eighths',
  'three quarters',
  'seven eighths',
];

/**
 * A move as a hand makes it without reading the scale: "a quarter turn clockwise", "about 20° anticlockwise".
 * Positive moves are clockwise (a trimmer's scale rises clockwise, common practice). A move back
 * anticlockwise ends clockwise again: past the setting and back, so the trimmer's play is always taken up
 * from the same side and the setting lands where it was asked for. '' for units that are not turns or degrees.
 */
export function handMove(x: number, unit: string): string {
  const u = unit.trim().toLowerCase();
  const turns = /^(turns?|rev|revs|revolutions?)$/.test(u)
    ? x
    : /^(°|deg|degrees?)$/.test(u)
      ? x / 360
      : null;
  if (turns === null || x === 0) return '';
  const way = turns > 0 ? 'clockwise' : 'anticlockwise, a little past, then back clockwise';
  const a = Math.abs(turns);
  const eighths = Math.round(a * 8);
  let how: string;
  if (a < 1 / 16) {
    const deg = Math.round(a * 360);
    how = deg < 1 ? 'a touch (under 1°)' : `about ${deg}°`;
  } else {
    const whole = Math.floor(eighths / 8);
    const part = eighths % 8;
    const n = whole === 1 ? 'one' : String(whole);
    how =
      whole === 0
        ? EIGHTHS[part]
        : part === 0
          ? `${n} turn${whole === 1 ? '' : 's'}`
          : `${n} and ${PARTS[part]} turns`;
  }
  // "about" when the eighths round the move by more than a degree.
  const approx = a >= 1 / 16 && Math.abs(a - eighths / 8) * 360 > 1;
  return `${approx ? 'about ' : ''}${how} ${way}`;
}

/** A signed move with the hand's version beside it when there is one: "+0.250 turns (a quarter turn clockwise)". */
export function moveText(x: number, step: number, unit: string): string {
  const hand = handMove(Math.round(x / step) * step, unit);
  return `${signedAmount(x, step, unit)}${hand ? ` (${hand})` : ''}`;
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
