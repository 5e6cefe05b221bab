// docs/sources.md is the list of published methods and check values; every citation of one of its entries (the path,
// "#" and the entry's anchor) in the sources or the tests must name an entry that exists, and every file an entry names must exist.
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import { describe, expect, it } from 'vitest';

const root = new URL('../..', import.meta.url).pathname;
const doc = readFileSync(join(root, 'docs/sources.md'), 'utf8');
const anchors = new Set([...doc.matchAll(/^### ([a-z0-9-]+)$/gm)].map((m) => m[1]));

function sourceFiles(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    if (name === 'node_modules' || name === 'dist' || name.startsWith('.')) continue;
    const p = join(dir, name);
    if (statSync(p).isDirectory()) out.push(...sourceFiles(p));
    else if (/\.(ts|md)$/.test(name)) out.push(p);
  }
  return out;
}

describe('docs/sources.md', () => {
  it('has entries, each under a unique anchor', () => {
    const headings = [...doc.matchAll(/^### (.+)$/gm)].map((m) => m[1]);
    expect(headings.length).toBeGreaterThan(30);
    expect(new Set(headings).size).toBe(headings.length);
    for (const h of headings) expect(h).toMatch(/^[a-z0-9-]+$/);
  });

  it('every citation in shared/, server/, client/, tests/ and the documents names an existing entry', () => {
    const cited: { file: string; anchor: string }[] = [];
    const files = ['shared', 'server', 'client/src', 'tests'].flatMap((d) => sourceFiles(join(root, d)));
    files.push(join(root, 'README.md'), join(root, 'DEVELOPERS.md'), join(root, 'docs/sources.md'));
    for (const f of files) {
      const text = readFileSync(f, 'utf8');
      for (const m of text.matchAll(/docs\/sources\.md#([A-Za-z0-9-]+)/g)) cited.push({ file: relative(root, f), anchor: m[1] });
      for (const m of text.matchAll(/\]\(#([a-z0-9-]+)\)/g)) if (f.endsWith('sources.md')) cited.push({ file: relative(root, f), anchor: m[1] });
    }
    expect(cited.length).toBeGreaterThan(25);
    // A citation of a sources file outside the repository (the upper-case file name) names nothing a reader can open.
    const elsewhere = files.filter((f) => /\bSOURCES\.md/.test(readFileSync(f, 'utf8')));
    expect(elsewhere.map((f) => relative(root, f))).toEqual([]);
    const missing = cited.filter((c) => !anchors.has(c.anchor)).map((c) => `${c.file}: #${c.anchor}`);
    expect(missing).toEqual([]);
  });

  it('names only files that exist', () => {
    const named = new Set([...doc.matchAll(/`((?:shared|server|client|tests)\/[^`*\s]+\.ts)`/g)].map((m) => m[1]));
    expect(named.size).toBeGreaterThan(20);
    expect([...named].filter((f) => !existsSync(join(root, f)))).toEqual([]);
  });
});
