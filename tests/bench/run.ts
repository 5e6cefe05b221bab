// Runs every benchmark file (tests/bench/*.bench.ts) one after another, each in its own process so one
// benchmark's heap and JIT state never colour another's figures. `npm run bench -- thermal` runs matching files only.
import { readdirSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';

const dir = new URL('.', import.meta.url).pathname;
const filter = process.argv[2];
const files = readdirSync(dir)
  .filter((f) => f.endsWith('.bench.ts') && (!filter || f.includes(filter)))
  .sort();
let failed = 0;
for (const f of files) {
  process.stdout.write(`\n=== ${f} ===\n`);
  const r = spawnSync(process.execPath, ['--import', 'tsx', join(dir, f)], { stdio: 'inherit' });
  if (r.status !== 0) failed++;
}
if (failed) process.exit(1);
