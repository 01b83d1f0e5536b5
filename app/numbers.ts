// Runs anywhere (app/ is runtime-free). The one reader of numbers typed by a person: a decimal point or a
// decimal comma ("4.37", "4,37"), a typographic minus pasted from a document, spaces around. Every numeric
// field of the renderer and the levels in text go through it, so "4,37" is never 437.
import { BenchError } from './errors';

export interface DecimalRule {
  min?: number;
  max?: number;
  /** Whole numbers only (counts, steps, data bits). */
  integer?: boolean;
  /** What the field's unit is, for the message ("turns", "dBm"). */
  unit?: string;
}

const PLAIN = /^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$/;

/**
 * The text of a number as JavaScript reads it: one decimal separator, point or comma, never both and never
 * two (a thousands separator would make "1,234" ambiguous between 1.234 and 1234, so it is refused, not
 * guessed). Null when the text is no plain number.
 */
export function normaliseDecimal(text: string): string | null {
  const t = text
    .trim()
    .replace(/\u2212/g, '-')
    .replace(/^\+/, '');
  if (!PLAIN.test(t)) return null;
  return t.replace(',', '.');
}

/** A number typed into `field`, checked against `rule`; a clear EINVAL naming the field otherwise. */
export function parseDecimal(text: string, field: string, rule: DecimalRule = {}): number {
  const unit = rule.unit ? ` ${rule.unit}` : '';
  if (typeof text !== 'string' || text.trim() === '')
    throw new BenchError('EINVAL', `${field}: is empty; type a number${unit}`, field);
  const norm = normaliseDecimal(text);
  if (norm === null) {
    const hint =
      /\d[.,]\d{3}[.,]/.test(text) || /\d,\d+\.\d|\d\.\d+,\d/.test(text)
        ? ' (write it without thousands separators, with one decimal point or comma)'
        : ' (digits with one decimal point or comma, e.g. 4.37 or 4,37)';
    throw new BenchError('EINVAL', `${field}: "${text}" is not a number${hint}`, field);
  }
  const v = Number(norm);
  if (!Number.isFinite(v)) throw new BenchError('EINVAL', `${field}: "${text}" is out of range`, field);
  if (rule.integer && !Number.isInteger(v))
    throw new BenchError('EINVAL', `${field}: "${text}" must be a whole number`, field);
  if (rule.min !== undefined && v < rule.min)
    throw new BenchError(
      'EINVAL',
      `${field}: ${v}${unit} is below the lowest allowed, ${rule.min}${unit}`,
      field,
    );
  if (rule.max !== undefined && v > rule.max)
    throw new BenchError(
      'EINVAL',
      `${field}: ${v}${unit} is above the highest allowed, ${rule.max}${unit}`,
      field,
    );
  return v;
}
