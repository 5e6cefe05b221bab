// Start-up time of the command line beside the reference `node -e 0` on the same machine. Figures only: never a
// pass/fail on time. 20 alternating runs of each (after one warm-up), median wall time, and the ratio (target ≤ 3×).
// Also the same figure for the development path (SUBTHERM_FROM_SOURCE=1: TypeScript compiled on the fly by tsx).
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { buildCli } from '../../bin/build-cli.mjs';

const root = new URL('../..', import.meta.url).pathname;
const bin = join(root, 'bin', 'subtherm.mjs');
const RUNS = 20;

function timeMs(args: string[], env: NodeJS.ProcessEnv = process.env): number {
  const t = performance.now();
  const r = spawnSync(process.execPath, args, { cwd: root, env, stdio: ['ignore', 'ignore', 'inherit'] });
  const ms = performance.now() - t;
  if (r.status !== 0) throw new Error(`node ${args.join(' ')} exited ${String(r.status)}`);
  return ms;
}

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
};

await buildCli({ quiet: true });
const cases: { label: string; args: string[]; env?: NodeJS.ProcessEnv }[] = [
  { label: 'node -e 0', args: ['-e', '0'] },
  { label: 'subtherm geotherm --help (compiled)', args: [bin, 'geotherm', '--help'] },
  { label: 'subtherm --help (compiled)', args: [bin, '--help'] },
  { label: 'subtherm geotherm --help (sources under tsx)', args: [bin, 'geotherm', '--help'], env: { ...process.env, SUBTHERM_FROM_SOURCE: '1' } },
];
const times = cases.map(() => [] as number[]);
for (const c of cases) timeMs(c.args, c.env); // warm-up: file cache, tsx cache
for (let i = 0; i < RUNS; i++) cases.forEach((c, k) => times[k].push(timeMs(c.args, c.env)));

const ref = median(times[0]);
process.stdout.write(`start-up, median of ${RUNS} alternating runs (wall time):\n`);
cases.forEach((c, k) => {
  const m = median(times[k]);
  process.stdout.write(`  ${c.label.padEnd(46)} ${m.toFixed(1).padStart(7)} ms  ${k === 0 ? '(reference)' : `${(m / ref).toFixed(2)}× node -e 0`}\n`);
});
process.stdout.write('target: subtherm geotherm --help ≤ 3× node -e 0\n');
