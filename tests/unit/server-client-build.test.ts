// When the server rebuilds the web client: a missing build, or one older than any of its sources, is stale, so a
// checkout updated in place never serves an old page.
import { describe, expect, it } from 'vitest';
import { mkdtempSync, mkdirSync, writeFileSync, utimesSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { clientBuildIsStale } from '../../server/main.ts';

function tree(): string {
  const root = mkdtempSync(join(tmpdir(), 'client-build-'));
  for (const d of ['client/src', 'client/dist', 'shared/grid']) mkdirSync(join(root, d), { recursive: true });
  for (const f of ['client/src/main.ts', 'client/index.html', 'client/vite.config.ts', 'shared/grid/grid.ts']) writeFileSync(join(root, f), '//');
  return root;
}
const at = (root: string, file: string, seconds: number) => utimesSync(join(root, file), seconds, seconds);

describe('clientBuildIsStale', () => {
  it('is stale when there is no build', () => {
    expect(clientBuildIsStale(tree())).toBe(true);
  });

  it('is fresh when the build is newer than every source, stale when a client or shared source is newer', () => {
    const root = tree();
    writeFileSync(join(root, 'client/dist/index.html'), '<!doctype html>');
    for (const f of ['client/src/main.ts', 'client/index.html', 'client/vite.config.ts', 'shared/grid/grid.ts']) at(root, f, 1_000_000);
    at(root, 'client/dist/index.html', 2_000_000);
    expect(clientBuildIsStale(root)).toBe(false);
    at(root, 'client/src/main.ts', 3_000_000);
    expect(clientBuildIsStale(root)).toBe(true);
    at(root, 'client/src/main.ts', 1_000_000);
    at(root, 'shared/grid/grid.ts', 3_000_000);
    expect(clientBuildIsStale(root)).toBe(true);
  });
});
