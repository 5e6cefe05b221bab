// R's gstat (Debian r-cran-gstat; Pebesma 2004) is the reference library of the geostatistics tests. Where it is
// missing those tests fail with this message instead of skipping: a check that silently does not run is no check.
import { spawnSync } from 'node:child_process';

let checked: string | null | undefined;

/** Null when `Rscript` runs and loads gstat and sp; otherwise what is wrong and how to install it. */
function gstatProblem(): string | null {
  if (checked !== undefined) return checked;
  const r = spawnSync('Rscript', ['-e', 'suppressMessages({library(sp); library(gstat)})'], { encoding: 'utf8' });
  if (r.error !== undefined) checked = `Rscript could not be started (${r.error.message})`;
  else if (r.status !== 0) checked = `Rscript could not load gstat: ${(r.stderr || '').trim().split('\n').slice(-2).join(' ')}`;
  else checked = null;
  return checked;
}

/**
 * Throws unless R with gstat is installed; call it first in the `beforeAll` of every suite that compares with gstat,
 * so that each of its tests fails with the reason.
 */
export function requireGstat(): void {
  const p = gstatProblem();
  if (p !== null)
    throw new Error(`R gstat, the reference library of this check, is missing: ${p}. Install it with apt-get install -y r-cran-gstat (bash .ci/run does).`);
}

/** Runs an R script and returns what it printed; a failing run throws with R's message (never a silent skip). */
export function runRscript(file: string): string {
  const out = spawnSync('Rscript', [file], { encoding: 'utf8' });
  if (out.error !== undefined || out.status !== 0)
    throw new Error(`R gstat is needed for this check (Debian r-cran-gstat): Rscript failed: ${out.error?.message ?? out.stderr}`);
  return out.stdout;
}
