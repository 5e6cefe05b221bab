// The whole test suite: type check, ESLint, the Prettier format check, then every unit, API and browser test under Vitest.
// Ends with the plain line `N passed, N failed` that CI reads.
import { spawnSync } from 'node:child_process';
import { mkdirSync, readFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';

const root = new URL('..', import.meta.url).pathname;
const tmp = join(root, '.tmp');
mkdirSync(tmp, { recursive: true });
const env = { ...process.env, TMPDIR: tmp };
const extra = process.argv.slice(2);

function run(cmd: string, args: string[]): number {
  const r = spawnSync(cmd, args, { cwd: root, stdio: 'inherit', env });
  return r.status ?? 1;
}

const bin = (name: string) => join(root, 'node_modules', '.bin', name);
let typeFailed = 0;
if (extra.length === 0) {
  process.stdout.write('type check: tsc --noEmit\n');
  typeFailed = run(bin('tsc'), ['--noEmit', '-p', '.']) === 0 ? 0 : 1;
}
let lintFailed = 0;
if (extra.length === 0) {
  process.stdout.write('lint: eslint .\n');
  lintFailed = run(bin('eslint'), ['.']) === 0 ? 0 : 1;
}

let formatFailed = 0;
if (extra.length === 0) {
  process.stdout.write('format: prettier --check .\n');
  formatFailed = run(bin('prettier'), ['--check', '.', '--log-level', 'warn']) === 0 ? 0 : 1;
}

// Compile the command line once, so the tests that start `bin/subtherm.mjs` do not each build it.
if (run(process.execPath, [join(root, 'bin', 'build-cli.mjs')]) !== 0) process.stdout.write('command-line build failed: the CLI tests run the sources\n');

const report = join(tmp, 'vitest-report.json');
const code = run(bin('vitest'), ['run', '--reporter=default', '--reporter=json', `--outputFile.json=${report}`, ...extra]);
let passed = 0;
let failed = 0;
if (existsSync(report)) {
  const r = JSON.parse(readFileSync(report, 'utf8')) as { numPassedTests: number; numFailedTests: number; numFailedTestSuites?: number };
  passed = r.numPassedTests;
  failed = r.numFailedTests;
  // A file that fails to load has no failed test of its own: count it once.
  if (code !== 0 && failed === 0) failed = Math.max(1, r.numFailedTestSuites ?? 0);
} else if (code !== 0) {
  failed = 1;
}
if (typeFailed) {
  failed += 1;
  process.stdout.write('type check failed\n');
} else if (extra.length === 0) {
  passed += 1;
}
if (lintFailed) {
  failed += 1;
  process.stdout.write('lint failed (npm run lint lists the problems)\n');
} else if (extra.length === 0) {
  passed += 1;
}
if (formatFailed) {
  failed += 1;
  process.stdout.write('format check failed (npm run format rewrites the listed files)\n');
} else if (extra.length === 0) {
  passed += 1;
}
process.stdout.write(`${passed} passed, ${failed} failed\n`);
process.exit(code !== 0 || typeFailed || lintFailed || formatFailed || failed > 0 ? 1 : 0);
