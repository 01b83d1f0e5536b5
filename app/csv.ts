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

/** A CSV file read back: its records as fields, each with the line it starts on (1-based). */
export interface CsvRead {
  /** The separator found; a tab-separated file (as spreadsheets copy to the clipboard) reads too. */
  separator: CsvSeparator | 'tab';
  records: { fields: string[]; line: number }[];
}

/**
 * Reads CSV as RFC 4180 writes it (quoted fields with doubled quotes, separators and line breaks inside
 * quotes), in either dialect: the separator is the one of comma, semicolon and tab found most often outside
 * quotes in the first record (a semicolon header may hold commas in unquoted text). A byte order mark is dropped; with
 * `comments`, lines starting with # are skipped. An unclosed quote is an error naming its line.
 */
export function parseCsv(text: string, opts: { comments?: boolean } = {}): CsvRead {
  const t = text.replace(/^\uFEFF/, '');
  const firstLine = t.split(/\r?\n/).find((l) => l.trim() !== '' && !l.trimStart().startsWith('#')) ?? '';
  const outside = firstLine.replace(/"[^"]*"/g, '');
  const count = (c: string) => outside.split(c).length - 1;
  const [semi, comma, tab] = [count(';'), count(','), count('\t')];
  const separator: CsvRead['separator'] =
    tab > semi && tab > comma ? 'tab' : semi > comma ? 'semicolon' : 'comma';
  const sep = separator === 'tab' ? '\t' : separator === 'semicolon' ? ';' : ',';
  const records: CsvRead['records'] = [];
  let fields: string[] = [];
  let field = '';
  let quoted = false;
  let line = 1;
  let start = 1;
  let quoteLine = 0;
  const endRecord = () => {
    fields.push(field);
    records.push({ fields, line: start });
    fields = [];
    field = '';
  };
  for (let i = 0; i < t.length; i++) {
    const c = t[i];
    if (quoted) {
      if (c === '"') {
        if (t[i + 1] === '"') {
          field += '"';
          i++;
        } else quoted = false;
      } else {
        if (c === '\n') line++;
        field += c;
      }
      continue;
    }
    // A comment line (opts.comments): '#' where a record starts, to the end of its line.
    if (opts.comments && c === '#' && field === '' && fields.length === 0) {
      while (i + 1 < t.length && t[i + 1] !== '\n' && t[i + 1] !== '\r') i++;
      continue;
    }
    if (c === '"' && field.trim() === '') {
      field = '';
      quoted = true;
      quoteLine = line;
    } else if (c === sep) {
      fields.push(field);
      field = '';
    } else if (c === '\n' || c === '\r') {
      if (c === '\r' && t[i + 1] === '\n') i++;
      endRecord();
      line++;
      start = line;
    } else field += c;
  }
  if (quoted) throw new Error(`line ${quoteLine}: a quoted field is never closed`);
  if (field !== '' || fields.length) endRecord();
  return { separator, records };
}
