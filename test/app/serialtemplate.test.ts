import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { BenchError } from '../../app/errors';
import {
  BUILTIN_TEMPLATES,
  bitsPerCharacter,
  builtinTemplate,
  escapeControls,
  exchangeBytes,
  formatSetFrequency,
  parseLevelReply,
  unescapeControls,
  validateTemplate,
} from '../../app/serialtemplate';

const base = {
  name: 'my-meter',
  defaultBaud: 19200,
  dataBits: 8,
  parity: 'none',
  stopBits: 1,
  terminator: '\r',
  query: 'LV',
  response: '^LV=(-?\\d+)$',
  quantity: 'strength-db',
};

const fails = (input: unknown, field: string, re: RegExp) =>
  assert.throws(
    () => validateTemplate(input),
    (e: unknown) => {
      assert.ok(e instanceof BenchError);
      assert.equal(e.code, 'EINVAL');
      assert.equal(e.field, field);
      assert.match(e.message, re);
      return true;
    },
  );

describe('serialtemplate.validateTemplate()', () => {
  it('accepts a minimal template and fills the defaults', () => {
    const t = validateTemplate(base);
    assert.equal(t.valueFormat, 'decimal');
    assert.equal(t.scale, 1);
    assert.equal(t.offset, 0);
    assert.equal(t.setFrequency, null);
    assert.deepEqual(t.init, []);
    assert.equal(t.timeoutMs, 500);
  });

  it('accepts every built-in template and keeps their names unique', () => {
    for (const t of BUILTIN_TEMPLATES) assert.deepEqual(validateTemplate(t), t);
    assert.equal(new Set(BUILTIN_TEMPLATES.map((t) => t.name)).size, BUILTIN_TEMPLATES.length);
  });

  it('names the field of each mistake', () => {
    fails({ ...base, name: 'My Meter' }, 'name', /lowercase/);
    fails({ ...base, defaultBaud: 38401 }, 'defaultBaud', /must be one of .*38400/);
    fails({ ...base, dataBits: 9 }, 'dataBits', /7 or 8/);
    fails({ ...base, parity: 'mark' }, 'parity', /none, even or odd/);
    fails({ ...base, response: '^LV=-?\\d+$' }, 'response', /no capture group/);
    fails({ ...base, response: '^LV=(\\d+$' }, 'response', /not a valid regular expression/);
    fails({ ...base, quantity: 'volts' }, 'quantity', /strength-db/);
    fails({ ...base, scale: 0 }, 'scale', /other than 0/);
    fails({ ...base, query: 'LV\r' }, 'query', /must not contain the terminator/);
    fails(
      { ...base, setFrequency: { command: 'F 7100000' } },
      'setFrequency.command',
      /must contain the frequency/,
    );
    fails({ ...base, setFrequency: { command: 'F {ghz}' } }, 'setFrequency.command', /unknown placeholder/);
    fails({ ...base, colour: 'red' }, '(input)', /unknown key "colour"/);
  });
});

describe('serialtemplate.formatSetFrequency()', () => {
  it('writes the frequency in Hz, kHz or MHz, padded or with decimals as asked', () => {
    const t = (command: string) => validateTemplate({ ...base, setFrequency: { command } });
    assert.equal(formatSetFrequency(t('F {hz}'), 7_100_000), 'F 7100000');
    assert.equal(formatSetFrequency(t('F{hz:011}'), 7_100_000), 'F00007100000');
    assert.equal(formatSetFrequency(t('T{khz:.3}'), 7_100_250), 'T7100.250');
    assert.equal(formatSetFrequency(t('M{mhz:.6}'), 14_200_000), 'M14.200000');
    assert.throws(() => formatSetFrequency(t('F{hz:06}'), 7_100_000), /does not fit in 6 digits/);
    assert.throws(
      () => formatSetFrequency(validateTemplate(base), 7e6),
      (e: unknown) => e instanceof BenchError && e.code === 'ENAVAIL',
    );
  });
});

describe('serialtemplate.parseLevelReply()', () => {
  it('takes the first capture group, in decimal or hex, times scale plus offset', () => {
    assert.equal(parseLevelReply(validateTemplate(base), 'LV=-12'), -12);
    const tenths = validateTemplate({ ...base, response: '^LV=(-?\\d+)$', scale: 0.1, offset: -10 });
    assert.equal(parseLevelReply(tenths, 'LV=-125'), -22.5);
    const hex = builtinTemplate('hex-counts')!;
    assert.equal(parseLevelReply(hex, '=0FA0'), 4000);
  });

  it('reports a reply outside the pattern, or a non-number, as EPROTO showing the reply', () => {
    const t = validateTemplate(base);
    for (const line of ['LV=', 'ERR', 'LV=1e']) {
      assert.throws(
        () => parseLevelReply(t, line),
        (e: unknown) =>
          e instanceof BenchError && e.code === 'EPROTO' && e.message.includes(JSON.stringify(line)),
      );
    }
    const loose = validateTemplate({ ...base, response: '^LV=(.*)$' });
    assert.throws(() => parseLevelReply(loose, 'LV=abc'), /"abc" is not a decimal number/);
  });
});

describe('serialtemplate wire arithmetic', () => {
  it('counts start, data, parity and stop bits per character (UART framing)', () => {
    assert.equal(bitsPerCharacter({ dataBits: 8, parity: 'none', stopBits: 1 }), 10); // 8N1
    assert.equal(bitsPerCharacter({ dataBits: 7, parity: 'even', stopBits: 1 }), 10); // 7E1
    assert.equal(bitsPerCharacter({ dataBits: 8, parity: 'none', stopBits: 2 }), 11); // 8N2
  });

  it('counts the bytes of one exchange: query and reply, each with its terminator', () => {
    const t = builtinTemplate('db-over-s9')!;
    assert.equal(exchangeBytes(t, 'LVL -12.5'.length), 5 + 10);
  });
});

describe('serialtemplate escapes', () => {
  it('shows control characters as escapes and reads them back', () => {
    for (const s of ['\r', '\r\n', 'A\tB', '\x1b[0m', 'back\\slash'])
      assert.equal(unescapeControls(escapeControls(s)), s);
    assert.equal(escapeControls('\r\n'), '\\r\\n');
    assert.throws(() => unescapeControls('\\q', 'terminator'), /terminator: unknown escape "\\q"/);
  });
});
