// Runs anywhere (app/ is runtime-free). Serial command-set templates: how a receiver that answers short ASCII
// commands on a serial port is asked for its level and told its frequency. A template is data (a table), not
// code: one serial driver reads every such receiver through it.
import { z } from 'zod';
import { BenchError, check } from './errors';
import { benchErrorFromZod } from './zodissue';

/** Baud rates a serial adapter offers (the usual UART list); others are refused as probable typos. */
export const STANDARD_BAUDS = [
  300, 600, 1200, 2400, 4800, 9600, 14400, 19200, 28800, 38400, 57600, 115200, 230400, 460800, 921600,
] as const;

/** Placeholder in a set-frequency command: {hz}, {khz}, {mhz}, optionally {hz:010} (zero-padded width) or {khz:.3}. */
const PLACEHOLDER_RE = /\{(hz|khz|mhz)(?::(0?\d{1,2})?(?:\.(\d))?)?\}/g;
const ANY_BRACE_RE = /[{}]/;

/** Counts the capture groups of a regular expression source (0 when it does not compile). */
function captureGroups(src: string): number {
  try {
    return new RegExp(`${src}|`).exec('')!.length - 1;
  } catch {
    return -1;
  }
}

/** Length of a varying repeat at src[i] (*, +, {n,}, {n,m} with m > n), or 0; a fixed count {n} is not one. */
function repeatAt(src: string, i: number): number {
  const c = src[i];
  if (c === '*' || c === '+') return 1;
  if (c !== '{') return 0;
  const m = /^\{(\d+)(,(\d*))?\}/.exec(src.slice(i));
  if (!m) return 0;
  const max = m[2] === undefined ? Number(m[1]) : m[3] === '' ? Infinity : Number(m[3]);
  return max > Number(m[1]) ? m[0].length : 0;
}

/**
 * True when a repeated group holds a repeat or alternatives of its own ("(\d+)+", "(a|ab)*", "(?:x{2,})+").
 * Such a pattern can take exponential time on a reply that almost matches: a garbled line would freeze the
 * reading loop. Replies of receivers never need one.
 */
export function hasNestedRepeat(src: string): boolean {
  // One entry per open group: does it contain a repeat or a "|"?
  const stack: boolean[] = [false];
  for (let i = 0; i < src.length; i++) {
    const c = src[i];
    if (c === '\\') {
      i++;
      if (repeatAt(src, i + 1)) stack[stack.length - 1] = true;
      continue;
    }
    if (c === '[') {
      let j = i + 1;
      if (src[j] === '^') j++;
      if (src[j] === ']') j++;
      while (j < src.length && src[j] !== ']') j += src[j] === '\\' ? 2 : 1;
      i = j;
      if (repeatAt(src, i + 1)) stack[stack.length - 1] = true;
      continue;
    }
    if (c === '(') stack.push(false);
    else if (c === ')' && stack.length > 1) {
      const inner = stack.pop()!;
      const repeated = repeatAt(src, i + 1) > 0;
      if (inner && repeated) return true;
      if (inner || repeated) stack[stack.length - 1] = true;
    } else if (c === '|') stack[stack.length - 1] = true;
    else if (repeatAt(src, i)) stack[stack.length - 1] = true;
  }
  return false;
}

const NESTED_REPEAT =
  'repeats a group that itself repeats or has alternatives (e.g. "(\\d+)+"): on a garbled reply such a ' +
  'pattern can take minutes; write it without the outer repeat, e.g. "(\\d+)"';

const command = (what: string) =>
  z
    .string({ error: `must be text (${what})` })
    .min(1, 'must not be empty')
    .max(80, 'must be at most 80 characters');

const pattern = z
  .string({ error: 'must be a regular expression as text' })
  .min(1, 'must not be empty')
  .max(200, 'must be at most 200 characters')
  .superRefine((src, ctx) => {
    const groups = captureGroups(src);
    if (groups < 0) ctx.addIssue({ code: 'custom', message: `"${src}" is not a valid regular expression` });
    else if (hasNestedRepeat(src)) ctx.addIssue({ code: 'custom', message: `"${src}" ${NESTED_REPEAT}` });
    else if (groups < 1)
      ctx.addIssue({
        code: 'custom',
        message: `"${src}" has no capture group: put the number in ( ), e.g. "^LVL ([-+]?\\d+(?:\\.\\d+)?)$"`,
      });
  });

const ackPattern = z
  .string()
  .min(1, 'must not be empty (use null when the receiver sends no reply)')
  .max(200, 'must be at most 200 characters')
  .refine((src) => captureGroups(src) >= 0, 'is not a valid regular expression')
  .refine((src) => !hasNestedRepeat(src), NESTED_REPEAT);

export const SerialTemplateSchema = z.strictObject({
  /** Short name used on the command line and in receiver profiles, e.g. "db-over-s9". */
  name: z
    .string({ error: 'must be text' })
    .regex(
      /^[a-z0-9][a-z0-9-]{1,39}$/,
      'must be 2-40 lowercase letters, digits or "-", starting with a letter or digit',
    ),
  description: z.string().max(400, 'must be at most 400 characters').default(''),
  /** Line settings; the baud rate comes from the source spec (serial:/dev/PATH@BAUD), this is its default. */
  defaultBaud: z
    .number({ error: 'must be a number (baud)' })
    .refine((b) => (STANDARD_BAUDS as readonly number[]).includes(b), {
      message: `must be one of ${STANDARD_BAUDS.join(', ')}`,
    }),
  dataBits: z.union([z.literal(7), z.literal(8)], { error: 'must be 7 or 8' }),
  parity: z.enum(['none', 'even', 'odd'], { error: 'must be none, even or odd' }),
  stopBits: z.union([z.literal(1), z.literal(2)], { error: 'must be 1 or 2' }),
  /** Ends every command and every reply, e.g. "\r" or "\r\n" (1-4 characters). */
  terminator: z.string().min(1, 'must not be empty').max(4, 'must be at most 4 characters'),
  /** Asks for the level, without the terminator. */
  query: command('the level query'),
  /** The reply to `query`: a regular expression whose first capture group is the number. */
  response: pattern,
  /** How the captured number is written. */
  valueFormat: z.enum(['decimal', 'hex'], { error: 'must be decimal or hex' }).default('decimal'),
  /** What the number means after scale and offset: dB relative to S9, S-units, raw counts, or dBm. */
  quantity: z.enum(['strength-db', 's-units', 'raw', 'dbm'], {
    error: 'must be strength-db (dB relative to S9), s-units, raw (counts) or dbm',
  }),
  /** value = captured number x scale + offset (e.g. tenths of a dB: scale 0.1). */
  scale: z
    .number({ error: 'must be a number' })
    .refine((v) => Number.isFinite(v) && v !== 0, 'must be a finite number other than 0')
    .default(1),
  offset: z.number({ error: 'must be a number' }).finite().default(0),
  /** Retunes the receiver: {hz}, {khz} or {mhz} with optional format, e.g. "FRQ {hz}" or "T{khz:.3}". */
  setFrequency: z
    .strictObject({
      command: command('the set-frequency command'),
      /** The receiver's reply, or null when it sends none. */
      ack: ackPattern.nullable().default(null),
    })
    .nullable()
    .default(null),
  /** Sent once after opening the port; replies are read and dropped. */
  init: z.array(command('an init command')).max(8, 'at most 8 init commands').default([]),
  /** Pause after each reply before the next command, ms (slow receivers need one). */
  interCommandDelayMs: z
    .number({ error: 'must be a number (ms)' })
    .min(0, 'must be >= 0 ms')
    .max(2000, 'must be <= 2000 ms')
    .default(0),
  /** How long to wait for a reply, ms. */
  timeoutMs: z
    .number({ error: 'must be a number (ms)' })
    .min(20, 'must be >= 20 ms')
    .max(10000, 'must be <= 10000 ms')
    .default(500),
});

export type SerialTemplate = z.output<typeof SerialTemplateSchema>;
export type SerialTemplateInput = z.input<typeof SerialTemplateSchema>;

/**
 * Checks a template from outside (UI, file, database). Besides the shape: commands may not contain the
 * terminator (it is added), placeholders must be known, and the set-frequency command must name the frequency.
 * Errors are EINVAL naming the field, e.g. "setFrequency.command".
 */
export function validateTemplate(input: unknown, root = ''): SerialTemplate {
  const r = SerialTemplateSchema.safeParse(input);
  if (!r.success) throw benchErrorFromZod(r.error, root);
  const t = r.data;
  const f = (k: string) => (root ? `${root}.${k}` : k);
  const noTerm = (cmd: string, field: string) =>
    check(
      !cmd.includes(t.terminator),
      f(field),
      `must not contain the terminator ${JSON.stringify(t.terminator)}: it is added to every command`,
    );
  noTerm(t.query, 'query');
  t.init.forEach((c, i) => noTerm(c, `init[${i}]`));
  check(
    !ANY_BRACE_RE.test(t.query),
    f('query'),
    'must not contain { } (only set-frequency takes a placeholder)',
  );
  if (t.setFrequency) {
    const cmd = t.setFrequency.command;
    noTerm(cmd, 'setFrequency.command');
    const stripped = cmd.replace(PLACEHOLDER_RE, '');
    check(
      !ANY_BRACE_RE.test(stripped),
      f('setFrequency.command'),
      `has an unknown placeholder in "${cmd}"; use {hz}, {khz} or {mhz}, optionally {hz:010} or {khz:.3}`,
    );
    check(
      stripped.length < cmd.length,
      f('setFrequency.command'),
      'must contain the frequency as {hz}, {khz} or {mhz} (e.g. "FRQ {hz}" or "T{khz:.3}")',
    );
  }
  return t;
}

/** The set-frequency command for a frequency, Hz (without terminator). */
export function formatSetFrequency(t: SerialTemplate, hz: number): string {
  if (!t.setFrequency)
    throw new BenchError(
      'ENAVAIL',
      `template "${t.name}" has no set-frequency command: tune the receiver by hand`,
    );
  check(Number.isFinite(hz) && hz > 0, 'freq_hz', `must be a frequency above 0 Hz, got ${hz}`);
  return t.setFrequency.command.replace(
    PLACEHOLDER_RE,
    (_m, unit: string, width?: string, decimals?: string) => {
      const v = unit === 'hz' ? hz : unit === 'khz' ? hz / 1e3 : hz / 1e6;
      let s = decimals !== undefined ? v.toFixed(Number(decimals)) : String(Math.round(v));
      if (width !== undefined) {
        const w = Number(width);
        if (s.length > w && width.startsWith('0'))
          throw new BenchError('EINVAL', `${hz} Hz does not fit in ${w} digits`, 'freq_hz');
        s = width.startsWith('0') ? s.padStart(w, '0') : s.padStart(w, ' ');
      }
      return s;
    },
  );
}

/**
 * The level in the template's quantity from one reply line (terminator removed).
 * @throws BenchError EPROTO when the line does not match the template's pattern or holds no number
 */
export function parseLevelReply(t: SerialTemplate, line: string): number {
  const m = new RegExp(t.response).exec(line);
  if (!m || m[1] === undefined)
    throw new BenchError(
      'EPROTO',
      `reply ${JSON.stringify(line)} does not match the template's pattern ${JSON.stringify(t.response)}`,
    );
  const text = m[1].trim();
  const n =
    t.valueFormat === 'hex'
      ? /^[+-]?[0-9a-fA-F]+$/.test(text)
        ? parseInt(text, 16)
        : NaN
      : /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/.test(text)
        ? Number(text)
        : NaN;
  if (!Number.isFinite(n))
    throw new BenchError(
      'EPROTO',
      `reply ${JSON.stringify(line)}: "${text}" is not a ${t.valueFormat} number`,
    );
  return n * t.scale + t.offset;
}

/** True when an acknowledgement line is what the template expects after set-frequency. */
export function ackMatches(t: SerialTemplate, line: string): boolean {
  return t.setFrequency?.ack ? new RegExp(t.setFrequency.ack).test(line) : true;
}

/** Bytes on the wire for one level exchange: query + terminator out, a reply of `replyLength` + terminator back. */
export function exchangeBytes(t: SerialTemplate, replyLength: number): number {
  return t.query.length + t.terminator.length + replyLength + t.terminator.length;
}

/** Bits per character on the wire: start bit + data bits + parity bit (if any) + stop bits. */
export function bitsPerCharacter(t: Pick<SerialTemplate, 'dataBits' | 'parity' | 'stopBits'>): number {
  return 1 + t.dataBits + (t.parity === 'none' ? 0 : 1) + t.stopBits;
}

/** Control characters shown as escapes ("\r", "\n", "\t", "\x1b") for editing; backslash doubled. */
export function escapeControls(s: string): string {
  // eslint-disable-next-line no-control-regex -- control characters are exactly what this escapes
  return s.replace(/[\\\x00-\x1f\x7f]/g, (c) => {
    if (c === '\\') return '\\\\';
    if (c === '\r') return '\\r';
    if (c === '\n') return '\\n';
    if (c === '\t') return '\\t';
    return `\\x${c.charCodeAt(0).toString(16).padStart(2, '0')}`;
  });
}

/** The inverse of escapeControls; an unknown escape is EINVAL naming the field. */
export function unescapeControls(s: string, field = 'text'): string {
  return s.replace(/\\(x[0-9a-fA-F]{2}|.)/g, (_m, e: string) => {
    if (e === 'r') return '\r';
    if (e === 'n') return '\n';
    if (e === 't') return '\t';
    if (e === '\\') return '\\';
    if (e.startsWith('x') && e.length === 3) return String.fromCharCode(parseInt(e.slice(1), 16));
    throw new BenchError('EINVAL', `unknown escape "\\${e}" (use \\r, \\n, \\t, \\\\ or \\xNN)`, field);
  });
}

/**
 * Built-in examples: command sets of our own, for simulated devices and as starting points. They cannot be
 * changed or removed; save a copy under another name to adapt one.
 */
export const BUILTIN_TEMPLATES: readonly SerialTemplate[] = [
  validateTemplate({
    name: 'db-over-s9',
    description:
      'Level in dB relative to S9 with one decimal ("LVL -12.5"); tunes in Hz and answers "OK". 8 data bits, no parity, 1 stop bit.',
    defaultBaud: 38400,
    dataBits: 8,
    parity: 'none',
    stopBits: 1,
    terminator: '\r',
    query: 'LVL?',
    response: '^LVL ([-+]?\\d+(?:\\.\\d+)?)$',
    quantity: 'strength-db',
    setFrequency: { command: 'FRQ {hz}', ack: '^OK$' },
  }),
  validateTemplate({
    name: 'hex-counts',
    description:
      'Raw detector counts in hexadecimal ("=01A3"); needs a calibration table of counts. Tunes in kHz with three decimals, no reply. 7 data bits, even parity, 1 stop bit.',
    defaultBaud: 9600,
    dataBits: 7,
    parity: 'even',
    stopBits: 1,
    terminator: '\n',
    query: 'R',
    response: '^=([0-9A-Fa-f]{1,4})$',
    valueFormat: 'hex',
    quantity: 'raw',
    setFrequency: { command: 'T{khz:.3}', ack: null },
    interCommandDelayMs: 5,
  }),
  validateTemplate({
    name: 's-point',
    description:
      'S-meter in S-units with one decimal, readings above S9 continuing at 6 dB per S-unit ("S 9.8"); fixed tuning. 8 data bits, no parity, 2 stop bits.',
    defaultBaud: 4800,
    dataBits: 8,
    parity: 'none',
    stopBits: 2,
    terminator: '\r\n',
    query: 'S?',
    response: '^S\\s*(\\d+(?:\\.\\d+)?)$',
    quantity: 's-units',
    setFrequency: null,
  }),
];

export function builtinTemplate(name: string): SerialTemplate | undefined {
  return BUILTIN_TEMPLATES.find((t) => t.name === name);
}
