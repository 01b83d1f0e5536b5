// Runs anywhere (app/ is runtime-free). CSV as RFC 4180 writes it: CRLF between records, a field quoted
// when it holds the separator, a double quote, CR or LF, and a double quote inside doubled. Two dialects:
// comma-separated with a decimal point (RFC 4180's own), and semicolon-separated with a decimal comma, as
// spreadsheets set to a decimal-comma locale read and write it (common practice).

/** The two dialects: the separator names its decimal mark too. */
export type CsvSeparator = 'comma' | 'semicolon';
export const CSV_SEPARATORS: readonly CsvSeparator[] = ['comma', 'semicolon'];

export type CsvValue = string | number | boolean | null | undefined;

/**
 * Text a spreadsheet would run as a formula (=, +, -, @ at the start) gets a leading apostrophe, the usual
 * guard against formula injection; numbers are written as numbers and never touched.
 */
function guardText(s: string): string {
  return /^[=+\-@\t\r]/.test(s) ? `'${s}` : s;
}

/**
 * One field: numbers in full precision with a decimal point (a decimal comma in the semicolon dialect),
 * booleans as 1/0, empty for null.
 */
export function csvField(v: CsvValue, separator: CsvSeparator = 'comma'): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'boolean') return v ? '1' : '0';
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) return '';
    return separator === 'semicolon' ? String(v).replace('.', ',') : String(v);
  }
  const s = guardText(v);
  const special = separator === 'semicolon' ? /[";\r\n]/ : /[",\r\n]/;
  return special.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export interface CsvOptions {
  /** Start with a UTF-8 byte order mark, so spreadsheets read non-ASCII text right (default true). */
  bom?: boolean;
  /** Comma with a decimal point (default), or semicolon with a decimal comma. */
  separator?: CsvSeparator;
}

/** A whole file: header line, then one line per row, each ended by CRLF. */
export function toCsv(
  header: readonly string[],
  rows: readonly (readonly CsvValue[])[],
  opts: CsvOptions = {},
): string {
  const sep = opts.separator ?? 'comma';
  const join = sep === 'semicolon' ? ';' : ',';
  const field = (v: CsvValue) => csvField(v, sep);
  const lines = [header.map(field).join(join)];
  for (const r of rows) {
    if (r.length !== header.length)
      throw new Error(`csv: a row has ${r.length} fields, the header ${header.length}`);
    lines.push(r.map(field).join(join));
  }
  return `${opts.bom === false ? '' : '\uFEFF'}${lines.join('\r\n')}\r\n`;
}
