// The README's verb table and the CLI agree: every verb in the table exists and every verb is in the table, and each
// row names exactly the options that the verb's `--help` prints.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { runCli } from '../helpers/cli.ts';
import { VERBS } from '../../server/cli/verbs.ts';

const root = new URL('../..', import.meta.url).pathname;
const readme = readFileSync(join(root, 'README.md'), 'utf8');
const section = readme.slice(readme.indexOf('## Command line'), readme.indexOf('\n## ', readme.indexOf('## Command line') + 1));
const rows = new Map<string, string>();
for (const line of section.split('\n')) {
  const m = /^\| `([a-z-]+)` \| (.*?) \| .* \|$/.exec(line);
  if (m) rows.set(m[1], m[2]);
}
const optionsIn = (text: string): string[] =>
  [...new Set([...text.matchAll(/(?<![\w-])--[a-z][a-z0-9-]*/g)].map((m) => m[0]))].filter((o) => o !== '--help').sort();

async function helpOf(verb: string): Promise<string> {
  const { code, out } = await runCli([verb, '--help']);
  expect(code).toBe(0);
  return out;
}

afterEach(() => vi.restoreAllMocks());

describe('README verb table', () => {
  it('lists every verb of the CLI, and only those', () => {
    expect([...rows.keys()].sort()).toEqual(Object.keys(VERBS).sort());
  });

  for (const verb of Object.keys(VERBS)) {
    it(`${verb}: the row names the options that --help prints`, async () => {
      const help = await helpOf(verb);
      expect(optionsIn(help).length).toBeGreaterThan(0);
      expect(optionsIn(rows.get(verb) ?? '')).toEqual(optionsIn(help));
    });
  }
});
