// Runs in the Electron main process (imported by tests in Node too; no Electron import here). The window's
// size and place, kept between runs in a small JSON file in the user's data folder: read with every field
// checked (a damaged or foreign file means the default window, never a crash or an invisible one), placed
// back on a display that is still there, saved debounced while the window moves and at once when it closes,
// written whole (a temporary file renamed over the old one).
import { mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { dirname } from 'node:path';
import { z } from 'zod';

export interface Rect {
  x: number;
  y: number;
  width: number;
  height: number;
}

/** What is kept: the window's normal (not maximised) bounds, and whether it was maximised. */
export interface WindowState extends Rect {
  maximized: boolean;
}

export const STATE_FILE_NAME = 'window-state.json';

const coord = z.number().int().min(-100_000).max(100_000);
const extent = z.number().int().min(1).max(100_000);
const StateSchema = z
  .object({
    version: z.literal(1),
    x: coord,
    y: coord,
    width: extent,
    height: extent,
    maximized: z.boolean(),
  })
  .strict();

/** The kept state, or null with the reason when the file is missing, unreadable or not what we wrote. */
export function readWindowState(file: string): { state: WindowState | null; problem?: string } {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    return { state: null, problem: code === 'ENOENT' ? undefined : `${file}: cannot be read (${code})` };
  }
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch {
    return { state: null, problem: `${file}: not JSON` };
  }
  const parsed = StateSchema.safeParse(data);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    return { state: null, problem: `${file}: ${issue.path.join('.') || 'the file'}: ${issue.message}` };
  }
  const { x, y, width, height, maximized } = parsed.data;
  return { state: { x, y, width, height, maximized } };
}

/** Writes the state whole: a temporary file beside it, renamed over the old one. */
export function writeWindowState(file: string, s: WindowState): void {
  const r = (v: number) => Math.round(v);
  const body = {
    version: 1,
    x: r(s.x),
    y: r(s.y),
    width: r(s.width),
    height: r(s.height),
    maximized: s.maximized,
  };
  mkdirSync(dirname(file), { recursive: true });
  const tmp = `${file}.${process.pid}.tmp`;
  writeFileSync(tmp, JSON.stringify(body) + '\n');
  renameSync(tmp, file);
}

const overlap = (a: Rect, b: Rect) =>
  Math.max(0, Math.min(a.x + a.width, b.x + b.width) - Math.max(a.x, b.x)) *
  Math.max(0, Math.min(a.y + a.height, b.y + b.height) - Math.max(a.y, b.y));

/** How much of the window's top strip (its title bar, where it is grabbed) must lie on a display. */
export const GRAB = { width: 120, height: 32 };

/**
 * Where the window opens: the saved bounds when enough of its top strip is on one of today's displays' work
 * areas (GRAB), else moved onto the display it overlaps most (or the first) and shrunk to fit it; never
 * smaller than the window's minimum size. No saved state: the default size, placed by the system.
 */
export function placeWindow(
  saved: WindowState | null,
  workAreas: Rect[],
  defaults: { width: number; height: number; minWidth: number; minHeight: number },
): { bounds: Partial<Rect> & { width: number; height: number }; maximized: boolean } {
  if (!saved || workAreas.length === 0)
    return {
      bounds: { width: defaults.width, height: defaults.height },
      maximized: saved?.maximized ?? false,
    };
  const strip = { x: saved.x, y: saved.y, width: saved.width, height: Math.min(GRAB.height, saved.height) };
  const grabbable = workAreas.some((a) => {
    const w =
      Math.min(strip.x + strip.width, a.x + a.width) - Math.max(strip.x, a.x) >=
      Math.min(GRAB.width, strip.width);
    const h = Math.min(strip.y + strip.height, a.y + a.height) - Math.max(strip.y, a.y) >= strip.height;
    return w && h;
  });
  if (grabbable) return { bounds: { ...rectOf(saved) }, maximized: saved.maximized };
  const area = [...workAreas].sort((a, b) => overlap(saved, b) - overlap(saved, a))[0];
  const width = Math.max(defaults.minWidth, Math.min(saved.width, area.width));
  const height = Math.max(defaults.minHeight, Math.min(saved.height, area.height));
  const x = Math.min(Math.max(saved.x, area.x), area.x + area.width - width);
  const y = Math.min(Math.max(saved.y, area.y), area.y + area.height - height);
  return {
    bounds: { x: Math.max(x, area.x), y: Math.max(y, area.y), width, height },
    maximized: saved.maximized,
  };
}

const rectOf = (s: Rect): Rect => ({ x: s.x, y: s.y, width: s.width, height: s.height });

/** The timer calls the saver uses (tests pass their own clock). */
export interface Timers {
  set(fn: () => void, ms: number): unknown;
  clear(handle: unknown): void;
}
const realTimers: Timers = {
  set: (fn, ms) => setTimeout(fn, ms),
  clear: (h) => clearTimeout(h as NodeJS.Timeout),
};

/**
 * Saves the window's state `delayMs` after the last move or resize (`changed`), and at once on `flush`
 * (the window closing). A failed write is reported through `onError` and never stops the app.
 */
export function stateSaver(
  file: string,
  current: () => WindowState | null,
  opts: { delayMs?: number; timers?: Timers; onError?: (e: Error) => void } = {},
): { changed(): void; flush(): void } {
  const timers = opts.timers ?? realTimers;
  const delay = opts.delayMs ?? 500;
  let pending: unknown = null;
  const save = () => {
    pending = null;
    const s = current();
    if (!s) return;
    try {
      writeWindowState(file, s);
    } catch (e) {
      opts.onError?.(e as Error);
    }
  };
  return {
    changed() {
      if (pending !== null) timers.clear(pending);
      pending = timers.set(save, delay);
    },
    flush() {
      if (pending !== null) timers.clear(pending);
      save();
    },
  };
}
