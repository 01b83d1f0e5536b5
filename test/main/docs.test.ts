// Runs in Node. The project's own documents: docs/design.md and docs/references.md exist, every citation
// "docs/<file>.md § <section>" in the code, the tests and the lint rules names a heading that is there, and
// nothing cites a document outside the repository.
import { describe, it } from 'node:test';
import assert from 'node:assert/strict';
import { existsSync, readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { filesUnder, ROOT } from '../helpers/tree';

const files = (dir: string) => filesUnder(dir, /\.(ts|mjs|js|css|html)$/);

function headings(file: string): string[] {
  return readFileSync(join(ROOT, file), 'utf8')
    .split('\n')
    .filter((l) => /^#{2,4} /.test(l))
    .map((l) => l.replace(/^#+ /, '').trim());
}

const SOURCES = [
  ...['app', 'main', 'renderer', 'test', 'scripts'].flatMap((d) => files(join(ROOT, d))),
  join(ROOT, 'eslint.config.js'),
];

describe('docs/', () => {
  it('holds the design notes and the references', () => {
    for (const f of ['docs/design.md', 'docs/references.md']) {
      assert.ok(existsSync(join(ROOT, f)), `${f} is missing`);
      assert.ok(headings(f).length >= 5, `${f} has too few sections`);
    }
  });

  it('resolves every section cited in code, tests and lint rules', () => {
    const known: Record<string, string[]> = {
      'docs/design.md': headings('docs/design.md'),
      'docs/references.md': headings('docs/references.md'),
    };
    let cited = 0;
    const bad: string[] = [];
    for (const f of SOURCES) {
      const text = readFileSync(f, 'utf8');
      for (const m of text.matchAll(/docs\/(design|references)\.md § ([^\n'"`)*]+)/g)) {
        const doc = `docs/${m[1]}.md`;
        const after = m[2];
        // The section is a heading the cited text starts with, then anything that is not a letter or digit.
        const ok = known[doc].some((h) => after.startsWith(h) && !/^[A-Za-z0-9]/.test(after.slice(h.length)));
        cited++;
        if (!ok && !after.startsWith('<section>')) bad.push(`${relative(ROOT, f)}: ${doc} § ${after.trim()}`);
      }
    }
    assert.ok(cited >= 20, `only ${cited} citations found: the pattern has drifted`);
    assert.deepEqual(bad, []);
  });

  it('cites nothing outside the repository', () => {
    const outside = /\b(REFERENCES|DESIGN)\.md\b|\.\.\/shared\/|\/work\/shared/;
    const bad = SOURCES.filter((f) => f !== join(ROOT, 'test/main/docs.test.ts')).flatMap((f) =>
      readFileSync(f, 'utf8')
        .split('\n')
        .map((l, i) => [l, i] as const)
        .filter(([l]) => outside.test(l))
        .map(([l, i]) => `${relative(ROOT, f)}:${i + 1}: ${l.trim()}`),
    );
    assert.deepEqual(bad, []);
  });
});
