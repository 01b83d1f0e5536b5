// Runs in Node. The house holds (docs/design.md § The house): no import cycle anywhere in app/, main/ and
// renderer/ (type-only imports count: a cycle of types still ties the files together), and no file outside
// main/sources/ tells a source by the prefix of its spec string.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { filesUnder, ROOT } from '../helpers/tree';

/** TypeScript sources, declaration files left out. */
const tsFiles = (dir: string) => filesUnder(dir, /^(?!.*\.d\.ts$).*\.ts$/);

/** Relative import and export specifiers of a source file (static, dynamic and type-only alike). */
export function importsOf(src: string): string[] {
  const out: string[] = [];
  const re = /(?:\bfrom\s+|\bimport\s*\(\s*|^\s*import\s+)(['"])(\.{1,2}\/[^'"]*|\.{1,2})\1/gm;
  for (let m = re.exec(src); m; m = re.exec(src)) out.push(m[2]);
  return out;
}

function resolveImport(from: string, spec: string): string | null {
  const base = resolve(dirname(from), spec).replace(/\.(js|ts)$/, '');
  for (const c of [`${base}.ts`, join(base, 'index.ts')]) if (existsSync(c)) return c;
  return null;
}

/** Tarjan's strongly connected components (R. Tarjan, SIAM J. Comput. 1(2), 1972). */
export function cycles(graph: Map<string, string[]>): string[][] {
  let index = 0;
  const idx = new Map<string, number>();
  const low = new Map<string, number>();
  const stack: string[] = [];
  const on = new Set<string>();
  const out: string[][] = [];
  const visit = (v: string) => {
    idx.set(v, index);
    low.set(v, index++);
    stack.push(v);
    on.add(v);
    for (const w of graph.get(v) ?? []) {
      if (!idx.has(w)) {
        visit(w);
        low.set(v, Math.min(low.get(v)!, low.get(w)!));
      } else if (on.has(w)) low.set(v, Math.min(low.get(v)!, idx.get(w)!));
    }
    if (low.get(v) === idx.get(v)) {
      const comp: string[] = [];
      let w: string;
      do {
        w = stack.pop()!;
        on.delete(w);
        comp.push(w);
      } while (w !== v);
      if (comp.length > 1 || (graph.get(v) ?? []).includes(v)) out.push(comp.sort());
    }
  };
  for (const v of graph.keys()) if (!idx.has(v)) visit(v);
  return out;
}

describe('the house', () => {
  it('finds a cycle when there is one (the check itself)', () => {
    const g = new Map([
      ['a', ['b']],
      ['b', ['c']],
      ['c', ['a']],
      ['d', ['a']],
    ]);
    assert.deepEqual(cycles(g), [['a', 'b', 'c']]);
    assert.deepEqual(
      cycles(
        new Map([
          ['a', ['b']],
          ['b', []],
        ]),
      ),
      [],
    );
    assert.deepEqual(
      importsOf("import type { X } from './x';\nexport * from '../y';\nconst z = await import('./z');"),
      ['./x', '../y', './z'],
    );
  });

  it('has no import cycle in app/, main/ or renderer/', () => {
    const files = ['app', 'main', 'renderer'].flatMap((d) => tsFiles(join(ROOT, d)));
    assert.ok(files.length > 100, `only ${files.length} files found`);
    const graph = new Map<string, string[]>();
    for (const f of files) {
      const deps = importsOf(readFileSync(f, 'utf8'))
        .map((s) => resolveImport(f, s))
        .filter((x): x is string => x !== null);
      graph.set(f, deps);
    }
    const found = cycles(graph).map((c) => c.map((f) => relative(ROOT, f)).join(' -> '));
    assert.deepEqual(found, [], `import cycles:\n${found.join('\n')}`);
  });

  it('tells sources apart only in main/sources/ (no spec-prefix tests elsewhere)', () => {
    const files = ['app', 'main', 'renderer'].flatMap((d) => tsFiles(join(ROOT, d)));
    const pattern = /(startsWith\(\s*['"`](sim|serial|net|iq|iqsim|audio|file)\b)|(===\s*['"`]iqsim['"`])/;
    const bad = files
      .filter((f) => !relative(ROOT, f).startsWith(join('main', 'sources')))
      .flatMap((f) =>
        readFileSync(f, 'utf8')
          .split('\n')
          .map((line, i) => ({ line, at: `${relative(ROOT, f)}:${i + 1}` }))
          .filter((x) => pattern.test(x.line))
          .map((x) => `${x.at}: ${x.line.trim()}`),
      );
    assert.deepEqual(bad, []);
  });
});
