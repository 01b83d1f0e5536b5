// The readings CSV: RFC 4180 (CRLF, quoting), one row per reading, units in the header; read back with
// Python's csv module, the reference parser here, exactly as a spreadsheet import would see it.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { csvField, parseCsv, toCsv } from '../../app/csv';
import { readingsCsv } from '../../main/store/csv';
import { Records } from '../../main/store/records';
import { Store } from '../../main/store/store';
import { demoDb } from '../helpers/demo';
import { pythonJson } from '../helpers/python';
import { connectionOf } from '../../main/store/connection';

/** Python's csv.reader on the bytes (utf-8-sig drops the byte order mark, as spreadsheets do). */
function pyRows(csv: string): string[][] {
  return pythonJson<string[][]>(
    'import csv,io,json,sys\nprint(json.dumps(list(csv.reader(io.StringIO(sys.stdin.buffer.read().decode("utf-8-sig"), newline="")))))',
    new TextEncoder().encode(csv),
  );
}

describe('csv.toCsv()', () => {
  it('quotes commas, quotes and line breaks as RFC 4180 says, and ends every record with CRLF', () => {
    const text = toCsv(
      ['a', 'b, c'],
      [
        ['x "y"', 'line1\nline2'],
        [1.5, true],
      ],
      { bom: false },
    );
    assert.equal(text, 'a,"b, c"\r\n"x ""y""","line1\nline2"\r\n1.5,1\r\n');
    // Reference: Python's csv module (RFC 4180 dialect "excel") reads back the same fields.
    assert.deepEqual(pyRows(text), [
      ['a', 'b, c'],
      ['x "y"', 'line1\nline2'],
      ['1.5', '1'],
    ]);
  });

  it('writes the semicolon dialect with a decimal comma, quoting semicolons instead of commas', () => {
    const text = toCsv(
      ['level (dBm)', 'note'],
      [
        [-12.5, 'a; b'],
        [3, 'x, y'],
      ],
      { bom: false, separator: 'semicolon' },
    );
    assert.equal(text, 'level (dBm);note\r\n-12,5;"a; b"\r\n3;x, y\r\n');
    // Reference: Python's csv module with delimiter ";" reads the same fields back.
    const rows = pythonJson<string[][]>(
      'import csv,io,json,sys\nprint(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read(), newline=""), delimiter=";"))))',
      new TextEncoder().encode(text),
    );
    assert.deepEqual(rows, [
      ['level (dBm)', 'note'],
      ['-12,5', 'a; b'],
      ['3', 'x, y'],
    ]);
  });

  it("reads back what it writes, in both dialects, field for field as Python's csv module reads it", () => {
    const header = ['level (dBm)', 'note, with comma', 'x'];
    const rows = [
      [-12.5, 'two\nlines', 'say "hi"'],
      [3, 'a; b', ''],
    ];
    for (const separator of ['comma', 'semicolon'] as const) {
      const text = toCsv(header, rows, { separator });
      const back = parseCsv(text);
      assert.equal(back.separator, separator);
      // Reference: Python's csv module with the dialect's delimiter.
      const delim = separator === 'comma' ? ',' : ';';
      const py = pythonJson<string[][]>(
        `import csv,io,json,sys\nprint(json.dumps(list(csv.reader(io.StringIO(sys.stdin.buffer.read().decode("utf-8-sig"), newline=""), delimiter="${delim}"))))`,
        new TextEncoder().encode(text),
      );
      assert.deepEqual(
        back.records.map((r) => r.fields),
        py,
      );
      // A record's line is where it starts: the one with a line break inside quotes spans two.
      assert.deepEqual(
        back.records.map((r) => r.line),
        [1, 2, 4],
      );
    }
    assert.throws(() => parseCsv('a,b\n"open,1\n'), /line 2: a quoted field is never closed/);
  });

  it('keeps spreadsheet formulas out of text fields, never out of numbers', () => {
    assert.equal(csvField('=HYPERLINK("x")'), `"'=HYPERLINK(""x"")"`);
    assert.equal(csvField('@cmd'), "'@cmd");
    assert.equal(csvField(-42.5), '-42.5');
    assert.equal(csvField(null), '');
  });
});

describe('records.readingsCsv()', () => {
  it('writes one row per stored reading with units in the header, readable by a CSV parser', async () => {
    const d = await demoDb();
    const store = new Store(d.file);
    try {
      const u = new Records(store).unitBySerial('HD40-0102');
      const s = store.listSessions(u.id)[0];
      // A note with a comma, a quote and a line break must survive the trip.
      connectionOf(store)
        .prepare(
          'UPDATE readings SET note = ? WHERE id = (SELECT MIN(id) FROM readings_wide WHERE session_id = ?)',
        )
        .run('turned "A", then\nwaited', s.id);
      const r = readingsCsv(store, { unitId: u.id });
      assert.ok(r.csv.startsWith('\uFEFF'), 'UTF-8 byte order mark for spreadsheets');
      const rows = pyRows(r.csv);
      const n = (
        connectionOf(store)
          .prepare('SELECT COUNT(*) AS n FROM readings_wide WHERE session_id = ?')
          .get(s.id) as {
          n: number;
        }
      ).n;
      assert.equal(rows.length, n + 1, 'a header and one row per reading');
      assert.equal(r.rows, n);
      const head = rows[0];
      for (const h of [
        'frequency (Hz)',
        'level at receiver (dBm)',
        'level at transmitter (dBm)',
        'standard uncertainty (dB, k=1)',
        'trim A (turns)',
        'trim B (turns)',
        'time (UTC)',
      ])
        assert.ok(head.includes(h), `header has "${h}"`);
      const col = (name: string) => head.indexOf(name);
      const stored = connectionOf(store)
        .prepare(
          'SELECT uid, dbm_dut, freq_hz, note FROM readings_wide WHERE session_id = ? ORDER BY t_ms, id',
        )
        .all(s.id) as { uid: string; dbm_dut: number; freq_hz: number; note: string }[];
      rows.slice(1).forEach((row, i) => {
        assert.equal(row.length, head.length);
        assert.equal(row[col('reading uid')], stored[i].uid);
        assert.equal(Number(row[col('level at transmitter (dBm)')]), stored[i].dbm_dut);
        assert.equal(Number(row[col('frequency (Hz)')]), stored[i].freq_hz);
        assert.equal(row[col('note')], stored[i].note);
        assert.match(row[col('time (UTC)')], /^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/);
      });
      assert.ok(rows.some((row) => row[col('note')] === 'turned "A", then\nwaited'));
      assert.match(r.fileName, /^nullbench-readings-unit-HD40-0102\.csv$/);
      assert.equal(
        readingsCsv(store).rows,
        (connectionOf(store).prepare('SELECT COUNT(*) AS n FROM readings').get() as { n: number }).n,
      );
    } finally {
      store.close();
      d.cleanup();
    }
  });
});
