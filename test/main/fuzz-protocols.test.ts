// Property-based fuzzing (fast-check) of what receivers say and what users write for them: replies of the
// network rig-control protocol (over a real loopback socket), serial command-set templates, and the matching of
// reply lines against a template. Whatever arrives: no crash, no hang, a clear error, never a number that
// was not in the reply.
import { describe, it, before, after } from 'node:test';
import assert from 'node:assert/strict';
import { createServer, type Server, type Socket } from 'node:net';
import fc from 'fast-check';
import {
  BUILTIN_TEMPLATES,
  ackMatches,
  formatSetFrequency,
  parseLevelReply,
  validateTemplate,
  type SerialTemplate,
} from '../../app/serialtemplate';
import { RigNetLink } from '../../main/sources/rignet';
import { assertClearError } from '../helpers/fuzz';

const RUNS = Number(process.env.FUZZ_RUNS ?? 300);

/** Regular-expression sources from a small grammar: atoms, groups, repeats, alternatives, anchors. */
const regexSource: fc.Arbitrary<string> = fc.letrec<{ re: string; atom: string }>((tie) => ({
  atom: fc.oneof(
    {
      weight: 5,
      arbitrary: fc.constantFrom('\\d', '[0-9]', '[-+]', 'L', ' ', '\\.', '.', 'x', '\\s', '[A-F0-9]'),
    },
    { weight: 2, arbitrary: tie('re').map((r) => `(${r})`) },
    { weight: 1, arbitrary: tie('re').map((r) => `(?:${r})`) },
  ),
  re: fc
    .array(
      fc
        .tuple(tie('atom'), fc.constantFrom('', '', '', '*', '+', '?', '{2}', '{1,3}', '{2,}'))
        .map(([a, q]) => a + q),
      { minLength: 1, maxLength: 4 },
    )
    .chain((parts) =>
      fc.oneof(
        { weight: 4, arbitrary: fc.constant(parts.join('')) },
        { weight: 1, arbitrary: tie('re').map((other) => `${parts.join('')}|${other}`) },
      ),
    ),
})).re;

const awkwardText = fc.oneof(
  fc.string({ maxLength: 30 }),
  fc.string({ unit: 'binary', maxLength: 20 }),
  fc.constantFrom(
    '',
    '\r',
    '\n',
    '\u0000',
    'LVL',
    'LVL -',
    'LVL 1e999',
    'LVL NaN',
    'LVL 0x1F',
    '{hz}',
    '{khz:.3}',
  ),
);

/** A built-in template with a few fields replaced by something else (or removed, or added). */
const editedTemplate = fc
  .tuple(
    fc.constantFrom(...BUILTIN_TEMPLATES),
    fc.array(
      fc.tuple(
        fc.constantFrom(
          'name',
          'defaultBaud',
          'dataBits',
          'parity',
          'stopBits',
          'terminator',
          'query',
          'response',
          'valueFormat',
          'quantity',
          'scale',
          'offset',
          'setFrequency',
          'init',
          'interCommandDelayMs',
          'timeoutMs',
          'surprise',
          '__proto__',
        ),
        fc.oneof(
          fc.anything({ maxDepth: 2 }),
          awkwardText,
          regexSource,
          fc.constantFrom(0, -1, 1e308, Number.NaN, Number.POSITIVE_INFINITY, 38400, 7, 'even', 'hex'),
          fc.record({
            command: fc.oneof(awkwardText, fc.constant('F{hz}')),
            ack: fc.oneof(regexSource, fc.constant(null)),
          }),
          fc.constant(undefined),
        ),
      ),
      { minLength: 1, maxLength: 3 },
    ),
  )
  .map(([base, edits]) => {
    const t: Record<string, unknown> = {
      ...base,
      setFrequency: base.setFrequency ? { ...base.setFrequency } : null,
    };
    for (const [k, v] of edits) {
      if (v === undefined) delete t[k];
      else Object.defineProperty(t, k, { value: v, enumerable: true, configurable: true, writable: true });
    }
    return t;
  });

describe('fuzz: serial command-set templates', () => {
  it('validateTemplate(): anything at all is a template or a clear EINVAL naming the field', () => {
    fc.assert(
      fc.property(fc.oneof(fc.anything({ maxDepth: 3 }), editedTemplate), (input) => {
        try {
          const t = validateTemplate(input);
          // What passed is usable: its patterns compile, its commands do not contain the terminator.
          new RegExp(t.response);
          assert.ok(!t.query.includes(t.terminator));
        } catch (e) {
          assertClearError(e, ['EINVAL'], `validateTemplate ${JSON.stringify(input)?.slice(0, 300)}`);
        }
      }),
      { numRuns: RUNS * 3 },
    );
  });

  it('refuses patterns that could freeze the reading loop on a garbled reply (nested or alternating repeats)', () => {
    const base = BUILTIN_TEMPLATES[0];
    for (const evil of [
      '^LVL ((\\d+)+)$',
      '^LVL (\\d*)*$',
      '^LVL ((?:\\d|\\d\\d)+)$',
      '^(.*)+$',
      '^LVL ((?:\\d+\\.?)+)$',
    ]) {
      assert.throws(
        () => validateTemplate({ ...base, response: evil }),
        (e: Error & { field?: string }) => e.field === 'response' && /can take minutes/.test(e.message),
        evil,
      );
      assert.throws(
        () =>
          validateTemplate({
            ...base,
            setFrequency: { command: 'F{hz}', ack: evil.replace(/\(\(/, '(') + '' },
          }),
        (e: Error & { field?: string }) => e.field === 'setFrequency.ack',
        evil,
      );
    }
  });

  it('parseLevelReply(), ackMatches(): any line gives the number it holds or a clear EPROTO, quickly', () => {
    const accepted = editedTemplate
      .map((t) => {
        try {
          return validateTemplate(t);
        } catch {
          return null;
        }
      })
      .filter((t): t is SerialTemplate => t !== null);
    const line = fc.oneof(
      awkwardText,
      fc.string({
        unit: fc.constantFrom('1', '2', '9', '.', '-', '+', 'e', 'x', ' ', 'L', 'V'),
        maxLength: 26,
      }),
    );
    fc.assert(
      fc.property(fc.oneof(fc.constantFrom(...BUILTIN_TEMPLATES), accepted), line, (t, l) => {
        try {
          const v = parseLevelReply(t, l);
          assert.ok(Number.isFinite(v), `${JSON.stringify(l)} gave ${v}`);
        } catch (e) {
          assertClearError(e, ['EPROTO'], `parseLevelReply ${t.response} ${JSON.stringify(l)}`);
        }
        assert.equal(typeof ackMatches(t, l), 'boolean');
      }),
      { numRuns: RUNS * 3 },
    );
  });

  it('parseLevelReply() reads back exactly the number a built-in command set was sent', () => {
    // The replies each built-in template describes, written from a known value.
    const write: Record<string, (v: number) => string> = {
      'db-over-s9': (v) => `LVL ${v.toFixed(1)}`,
      'hex-counts': (v) => `R${Math.round(v).toString(16).toUpperCase().padStart(2, '0')}`,
      's-point': (v) => `S${Math.round(v)}`,
    };
    for (const t of BUILTIN_TEMPLATES) assert.ok(write[t.name], `no writer for built-in template ${t.name}`);
    fc.assert(
      fc.property(fc.constantFrom(...BUILTIN_TEMPLATES), fc.integer({ min: 0, max: 255 }), (t, n) => {
        const raw = t.name === 'db-over-s9' ? n / 10 - 12 : t.name === 's-point' ? n % 10 : n;
        const text = write[t.name](raw);
        let got: number;
        try {
          got = parseLevelReply(t, text);
        } catch (e) {
          // A value the device cannot send in this form is refused, never misread.
          assertClearError(e, ['EPROTO'], text);
          return;
        }
        assert.ok(Math.abs(got - (raw * t.scale + t.offset)) < 1e-9, `${text} -> ${got}`);
      }),
      { numRuns: RUNS },
    );
  });

  it('formatSetFrequency(): any frequency gives a command without the terminator, or a clear refusal', () => {
    fc.assert(
      fc.property(
        fc.constantFrom(...BUILTIN_TEMPLATES),
        fc.oneof(fc.double(), fc.integer(), fc.constantFrom(1, 7.1e6, 1e12, 0, -1)),
        (t, hz) => {
          try {
            const cmd = formatSetFrequency(t, hz);
            assert.ok(!cmd.includes(t.terminator) && !/[{}]/.test(cmd), cmd);
          } catch (e) {
            assertClearError(e, ['EINVAL', 'ENAVAIL'], `formatSetFrequency ${hz}`);
          }
        },
      ),
      { numRuns: RUNS },
    );
  });
});

// ---- network rig-control replies -------------------------------------------------------------------

describe('fuzz: network rig-control replies', () => {
  let server: Server;
  let port = 0;
  /** What the scripted daemon answers to every command line, and whether it hangs up afterwards. */
  let reply = '';
  let hangUp = false;
  const sockets = new Set<Socket>();

  before(async () => {
    server = createServer((s) => {
      sockets.add(s);
      s.on('close', () => sockets.delete(s));
      s.on('error', () => undefined);
      let buf = '';
      s.on('data', (b: Buffer) => {
        buf += b.toString('latin1');
        while (buf.includes('\n')) {
          buf = buf.slice(buf.indexOf('\n') + 1);
          s.write(reply, 'latin1');
          if (hangUp) s.end();
        }
      });
    });
    await new Promise<void>((ok) => server.listen(0, '127.0.0.1', ok));
    port = (server.address() as { port: number }).port;
  });
  after(async () => {
    for (const s of sockets) s.destroy();
    await new Promise<void>((ok) => server.close(() => ok()));
  });

  const numberText = fc.oneof(
    fc.integer({ min: -60, max: 60 }).map(String),
    fc.double({ min: -100, max: 100, noNaN: true }).map((v) => v.toFixed(2)),
  );
  const replyLine = fc.oneof(
    numberText,
    fc.constantFrom('RPRT 0', 'RPRT -1', 'RPRT -4', 'RPRT -11', 'RPRT -99', 'RPRT 5', 'RPRT', 'RPRT x'),
    fc.constantFrom('get_level: STRENGTH', 'get_level: RAWSTR', 'get_level:'),
    numberText.map((n) => `STRENGTH: ${n}`),
    fc.constantFrom(
      '',
      ' ',
      'nan',
      'inf',
      '1e999',
      '0x10',
      '--5',
      '- 5',
      '5 dB',
      '\u0000',
      'set_freq: 7100000',
    ),
    fc.string({ maxLength: 20 }),
  );
  const replyText = fc
    .tuple(fc.array(replyLine, { maxLength: 5 }), fc.constantFrom('\n', '\r\n'), fc.nat(3))
    .map(([lines, eol, cut]) => {
      const text = lines.map((l) => l + eol).join('');
      // Sometimes the reply is cut off mid-line.
      return cut === 0 && text.length > 1 ? text.slice(0, text.length - 1 - (text.length % 3)) : text;
    });

  it('transact() + number(): a reply gives the number it holds, or a clear EPROTO, ETIMEOUT, EIO or daemon error', async () => {
    let numbers = 0;
    await fc.assert(
      fc.asyncProperty(replyText, fc.boolean(), fc.boolean(), async (text, extended, close) => {
        reply = text;
        hangUp = close;
        const link = new RigNetLink('127.0.0.1', port, 120);
        await link.connect();
        try {
          const r = await link.transact('l STRENGTH', extended, 1);
          const v = link.number('l STRENGTH', r);
          assert.ok(Number.isFinite(v));
          // The number really is one of the reply's values, as written.
          assert.ok(
            text
              .split(/\r?\n/)
              .some((l) => l.trim() === String(r.values[0]).trim() || l.endsWith(`: ${r.values[0]}`)),
            `${v} from ${JSON.stringify(text)}`,
          );
          numbers++;
        } catch (e) {
          assertClearError(
            e,
            ['EPROTO', 'ETIMEOUT', 'EIO', 'EREJECTED', 'ENAVAIL'],
            `reply ${JSON.stringify(text)} (${extended ? 'extended' : 'plain'})`,
          );
        } finally {
          link.close();
        }
      }),
      // A plain reply holding a number runs first, so the reading branch is always exercised.
      { numRuns: Math.min(RUNS, 150), examples: [['-54\n', false, false]] },
    );
    assert.ok(numbers > 0, 'the known-good reply "-54" was not read as a number');
  });

  it('reads exactly the level a well-formed reply carries, in both forms', async () => {
    await fc.assert(
      fc.asyncProperty(fc.integer({ min: -54, max: 60 }), fc.boolean(), async (level, extended) => {
        reply = extended ? `get_level: STRENGTH\nSTRENGTH: ${level}\nRPRT 0\n` : `${level}\n`;
        hangUp = false;
        const link = new RigNetLink('127.0.0.1', port, 500);
        await link.connect();
        try {
          assert.equal(link.number('l STRENGTH', await link.transact('l STRENGTH', extended, 1)), level);
        } finally {
          link.close();
        }
      }),
      { numRuns: 50 },
    );
  });
});
