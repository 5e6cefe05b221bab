// A throwaway PostgreSQL cluster for tests: initdb into a fresh folder under the checkout's .tmp/, started on a random
// port that listens only on a Unix socket in that folder, stopped and removed by stop(). PostgreSQL refuses to run as
// root, so under root the cluster belongs to the `postgres` system user (Debian's package creates it) and its folder
// is made under /tmp: that user cannot enter a checkout inside a private folder (e.g. one made by mktemp -d).
import { execFileSync } from 'node:child_process';
import { chownSync, existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { userInfo } from 'node:os';

export interface PgCluster {
  /** postgres://… URL of the cluster's `subtherm` database (socket folder in the host parameter). */
  url: string;
  stop(): void;
}

/** The folder holding initdb and pg_ctl: Debian keeps them under /usr/lib/postgresql/<major>/bin. */
function pgBin(): string | null {
  const root = '/usr/lib/postgresql';
  if (existsSync(root)) {
    const majors = readdirSync(root)
      .filter((d) => /^\d+$/.test(d))
      .sort((a, b) => Number(b) - Number(a));
    for (const m of majors) if (existsSync(join(root, m, 'bin', 'pg_ctl'))) return join(root, m, 'bin');
  }
  try {
    execFileSync('pg_ctl', ['--version'], { stdio: 'ignore' });
    return '';
  } catch {
    return null;
  }
}

export function startPgCluster(rootDir: string): PgCluster {
  const bin = pgBin();
  if (bin === null)
    throw new Error(
      'PostgreSQL (pg_ctl), which this test starts a throwaway cluster of, is not installed. Install it with apt-get install -y postgresql (bash .ci/run does).',
    );
  const exe = (name: string) => (bin === '' ? name : join(bin, name));
  const asRoot = userInfo().uid === 0;
  mkdirSync(join(rootDir, '.tmp'), { recursive: true });
  const dir = mkdtempSync(asRoot ? '/tmp/subtherm-pg-' : join(rootDir, '.tmp', 'pg-'));
  const owner = asRoot ? 'postgres' : userInfo().username;
  if (asRoot) {
    const uid = Number(execFileSync('id', ['-u', 'postgres']).toString().trim());
    const gid = Number(execFileSync('id', ['-g', 'postgres']).toString().trim());
    chownSync(dir, uid, gid);
  }
  const run = (cmd: string, args: string[]) =>
    asRoot ? execFileSync('runuser', ['-u', 'postgres', '--', cmd, ...args], { stdio: 'pipe', cwd: '/' }) : execFileSync(cmd, args, { stdio: 'pipe' });
  const data = join(dir, 'data');
  const port = 20000 + Math.floor(Math.random() * 40000);
  run(exe('initdb'), ['-D', data, '-A', 'trust', '-U', owner, '--no-sync', '-E', 'UTF8']);
  // No TCP at all: the socket folder is the cluster's own; small memory, no fsync wait (a test cluster).
  const opts = `-p ${port} -k ${dir} -c listen_addresses='' -c shared_buffers=16MB -c max_connections=40 -c fsync=off`;
  run(exe('pg_ctl'), ['-D', data, '-o', opts, '-l', join(dir, 'log'), '-w', 'start']);
  run(exe('createdb'), ['-h', dir, '-p', String(port), '-U', owner, 'subtherm']);
  let stopped = false;
  return {
    url: `postgres://${owner}@localhost:${port}/subtherm?host=${encodeURIComponent(dir)}`,
    stop() {
      if (stopped) return;
      stopped = true;
      try {
        run(exe('pg_ctl'), ['-D', data, '-m', 'immediate', '-w', 'stop']);
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    },
  };
}
