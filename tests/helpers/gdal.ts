// GDAL's command-line tools (Debian gdal-bin) are the reference readers and writers of the format tests. Where one is
// missing those tests fail with this message instead of skipping: a check that silently does not run is no check.
import { spawnSync } from 'node:child_process';

/** The Debian package that installs each tool the checks call; every other tool comes with gdal-bin. */
const PACKAGE: Record<string, string> = { zip: 'zip' };
const VERSION_FLAG: Record<string, string> = { zip: '-v' };
const checked = new Map<string, string | null>();

/** Null when the tool runs; otherwise what is wrong with it. */
function toolProblem(tool: string): string | null {
  let p = checked.get(tool);
  if (p !== undefined) return p;
  const r = spawnSync(tool, [VERSION_FLAG[tool] ?? '--version'], { encoding: 'utf8' });
  if (r.error !== undefined) p = `${tool} could not be started (${r.error.message})`;
  else if (r.status !== 0) p = `${tool} exited ${r.status}: ${(r.stderr || '').trim().split('\n').slice(-1)[0] ?? ''}`;
  else p = null;
  checked.set(tool, p);
  return p;
}

/**
 * Throws unless every named tool runs; call it first in each test that compares with GDAL, so that the test fails
 * with the reason and the install line.
 */
export function requireGdal(...tools: [string, ...string[]]): void {
  const missing = tools.filter((t) => toolProblem(t) !== null);
  if (missing.length === 0) return;
  const packages = [...new Set(missing.map((t) => PACKAGE[t] ?? 'gdal-bin'))].join(' ');
  throw new Error(
    `The reference tools of this check are missing: ${missing.map((t) => toolProblem(t)).join('; ')}. ` +
      `Install them with apt-get install -y ${packages} (bash .ci/run does).`,
  );
}
