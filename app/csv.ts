// Runs anywhere (app/ is runtime-free). CSV as RFC 4180 writes it: CRLF between records, a field quoted
// when it holds a comma, a double quote, CR or LF, and a double quote inside doubled.

export type CsvValue = string | number | boolean | null | undefined;

/**
 * Text a spreadsheet would run as a formula (=, +, -, @ at the start) gets a leading apostrophe, the usual
 * guard against formula injection; numbers are written as numbers and never touched.
 */
function guardText(s: string): string {
  return /^[=+\-@\t\r]/.test(s) ? `'${s}` : s;
}

/** One field: numbers in full precision with a dot, booleans as 1/0, empty for null. */
export function csvField(v: CsvValue): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'boolean') return v ? '1' : '0';
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : '';
  const s = guardText(v);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export interface CsvOptions {
  /** Start with a UTF-8 byte order mark, so spreadsheets read non-ASCII text right (default true). */
  bom?: boolean;
}

/** A whole file: header line, then one line per row, each ended by CRLF. */
export function toCsv(
  header: readonly string[],
  rows: readonly (readonly CsvValue[])[],
  opts: CsvOptions = {},
): string {
  const lines = [header.map(csvField).join(',')];
  for (const r of rows) {
    if (r.length !== header.length)
      throw new Error(`csv: a row has ${r.length} fields, the header ${header.length}`);
    lines.push(r.map(csvField).join(','));
  }
  return `${opts.bom === false ? '' : '\uFEFF'}${lines.join('\r\n')}\r\n`;
}
