import { serve } from '@hono/node-server';
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import type { AddressInfo } from 'node:net';
import { maxHeaderSize } from 'node:http';
import { createApp } from './app.ts';
import { SqliteStore } from './store/sqlite.ts';
import { PostgresStore } from './store/postgres.ts';
import type { Store } from './store/types.ts';
import { InputError } from '../shared/errors.ts';
import { DEMO_TERRAIN, loadDemo, loadDemoTerrain } from './demo.ts';
import { loadDem, TerrainTiles } from './terrain.ts';
import { answerClientError } from './routes/guards.ts';
import { redactUrl } from './security.ts';

export const ROOT_DIR = new URL('..', import.meta.url).pathname;
export const CLIENT_DIST = join(ROOT_DIR, 'client', 'dist');

export interface ServerOptions {
  port: number;
  host?: string;
  dbPath: string;
  /** postgres://… of a PostgreSQL database (SUBTHERM_DATABASE_URL); used instead of the SQLite file when given. */
  databaseUrl?: string;
  /** Build the client when client/dist is missing or older than its sources (what `npm start` does). */
  buildClient?: boolean;
  log?: (line: string) => void;
  /** Run the demo project's default run on start (default: unless SUBTHERM_DEMO_RUN=0). */
  demoRun?: boolean;
  /** Public base URL for absolute URLs in responses (default SUBTHERM_PUBLIC_URL; see AppOptions). */
  publicBaseUrl?: string;
  /** redis://… of the run queue shared with `subtherm worker` processes (SUBTHERM_QUEUE_URL); needs databaseUrl. */
  queueUrl?: string;
}

/**
 * Opens the database, turning the faults an operator can fix (a read-only file or folder, a path that cannot be
 * created, a full disk) into a plain message naming the path and what to do, instead of an internal error.
 */
export async function openStore(dbPath: string): Promise<SqliteStore> {
  let store: SqliteStore | null = null;
  try {
    store = new SqliteStore(dbPath);
    // A read-only file opens fine and fails on the first write: write once now (loading the demo on first start).
    store.db.exec('CREATE TABLE IF NOT EXISTS startup_probe (x INTEGER); DROP TABLE startup_probe;');
    await loadDemo(store);
    return store;
  } catch (e) {
    await store?.close();
    const code = (e as { code?: string }).code ?? '';
    const msg = (e as Error).message ?? String(e);
    if (/READONLY|CANTOPEN|PERM|AUTH/.test(code) || /EACCES|EROFS|EPERM|ENOENT|ENOTDIR|EEXIST/.test(code) || /readonly|read-only|unable to open/i.test(msg)) {
      throw new InputError(
        `cannot write the database ${dbPath} (${msg}). The server needs to create and write this file and its folder (it keeps -wal and -shm files beside it): make them writable by this user, or give another path with --db or SUBTHERM_DB.`,
        [{ field: 'db', problem: `${dbPath} is not writable` }],
        'database_read_only',
      );
    }
    if (/FULL/.test(code) || /ENOSPC/.test(code)) {
      throw new InputError(
        `the disk holding the database ${dbPath} is full: free some space, or give another path with --db or SUBTHERM_DB.`,
        [{ field: 'db', problem: 'disk full' }],
        'database_disk_full',
      );
    }
    throw e;
  }
}

/** A run queue is shared by processes that must all reach one database: SQLite is one machine's file. */
export function queueNeedsDatabase(): InputError {
  return new InputError(
    'a run queue (--queue-url or SUBTHERM_QUEUE_URL) needs a PostgreSQL database that every server and worker reaches: give --database-url or SUBTHERM_DATABASE_URL too (see "Running for a team" in the README)',
    [{ field: 'database-url', problem: 'required with a queue URL' }],
    'conflicting_options',
  );
}

/**
 * Connects to a PostgreSQL database and migrates it (loading the demo on first start); a database that cannot be
 * reached or refuses the login stops the server with a message naming the URL (password hidden) and the fault.
 */
export async function openPostgresStore(url: string, log: (line: string) => void = () => {}, opts: { queueOwnsRuns?: boolean } = {}): Promise<Store> {
  if (!/^postgres(ql)?:\/\//.test(url)) {
    throw new InputError(
      `the database URL must start with postgres:// or postgresql://, got ${redactUrl(url)}`,
      [{ field: 'database-url', problem: 'not a postgres:// URL' }],
      'bad_option',
    );
  }
  let store: PostgresStore | null = null;
  try {
    store = await PostgresStore.open(url, { log, queueOwnsRuns: opts.queueOwnsRuns });
    const opened = store;
    await opened.exclusive(() => loadDemo(opened));
    return store;
  } catch (e) {
    await store?.close();
    const msg = (e as Error).message ?? String(e);
    throw new InputError(
      `cannot use the database ${redactUrl(url)}: ${msg}. Check that PostgreSQL runs there and that the user may create tables in that database (see "Running for a team" in the README).`,
      [{ field: 'database-url', problem: msg }],
      'database_unavailable',
    );
  }
}

/** Newest modification time (ms) of the files under `path` (a file or a folder, walked recursively); 0 if absent. */
function newestMtimeMs(path: string): number {
  if (!existsSync(path)) return 0;
  const st = statSync(path);
  if (!st.isDirectory()) return st.mtimeMs;
  let newest = 0;
  for (const e of readdirSync(path, { withFileTypes: true })) newest = Math.max(newest, newestMtimeMs(join(path, e.name)));
  return newest;
}

/**
 * True when the built client (`client/dist/index.html` under `rootDir`) is missing or older than any of its sources
 * (`client/src`, `client/index.html`, `client/vite.config.ts` and `shared/`, which the client imports), so that a
 * checkout updated in place never serves a stale page.
 */
export function clientBuildIsStale(rootDir: string = ROOT_DIR): boolean {
  const built = join(rootDir, 'client', 'dist', 'index.html');
  if (!existsSync(built)) return true;
  const sources = ['client/src', 'client/index.html', 'client/vite.config.ts', 'shared'].map((p) => newestMtimeMs(join(rootDir, p)));
  return Math.max(...sources) > statSync(built).mtimeMs;
}

/** Builds the web client with Vite (client/vite.config.ts) into client/dist. */
export async function buildClient(log: (line: string) => void = () => {}): Promise<void> {
  log('building the web client (missing, or older than its sources) ...');
  const { build } = await import('vite');
  await build({ configFile: join(ROOT_DIR, 'client', 'vite.config.ts'), logLevel: 'warn' });
}

/** Opens the store (loading the demo on first start), builds the client if asked, and listens. */
export async function startServer(opts: ServerOptions) {
  const log = opts.log ?? ((l: string) => process.stdout.write(l + '\n'));
  if (opts.buildClient && clientBuildIsStale()) await buildClient(log);
  if (opts.queueUrl !== undefined && opts.databaseUrl === undefined) throw queueNeedsDatabase();
  const store =
    opts.databaseUrl !== undefined
      ? await openPostgresStore(opts.databaseUrl, log, { queueOwnsRuns: opts.queueUrl !== undefined })
      : await openStore(opts.dbPath);
  const dem = await loadDem(DEMO_TERRAIN);
  await (store instanceof PostgresStore ? store.exclusive(() => loadDemoTerrain(store, dem)) : loadDemoTerrain(store, dem));
  const terrain = new TerrainTiles(dem);
  // The demo project's default run starts in the background unless SUBTHERM_DEMO_RUN=0.
  const demoRun = opts.demoRun ?? process.env.SUBTHERM_DEMO_RUN !== '0';
  const app = createApp({
    store,
    terrain,
    clientDir: existsSync(join(CLIENT_DIST, 'index.html')) ? CLIENT_DIST : null,
    demoRun,
    publicBaseUrl: opts.publicBaseUrl,
    queueUrl: opts.queueUrl,
  });
  try {
    await app.ready;
  } catch (e) {
    await app.close().catch(() => undefined);
    await store.close();
    throw new InputError((e as Error).message, [{ field: 'queue-url', problem: (e as Error).message }], 'queue_unavailable');
  }
  const host = opts.host ?? '127.0.0.1';
  const server = await new Promise<ReturnType<typeof serve>>((resolve) => {
    const s = serve({ fetch: app.fetch, port: opts.port, hostname: host }, () => resolve(s));
  });
  // Requests Node's parser refuses (an over-long URL or header block, malformed HTTP) get the API's JSON errors.
  server.on('clientError', answerClientError(maxHeaderSize));
  const port = (server.address() as AddressInfo).port;
  // Loopback and all-interfaces binds are reached at localhost from this machine (scripts read this line).
  const shown = ['0.0.0.0', '::', '127.0.0.1', '::1', 'localhost'].includes(host) ? 'localhost' : host.includes(':') ? `[${host}]` : host;
  log(
    `subtherm listening on http://${shown}:${port} (database ${opts.databaseUrl !== undefined ? redactUrl(opts.databaseUrl) : opts.dbPath}${opts.queueUrl !== undefined ? `; runs on the queue ${redactUrl(opts.queueUrl)}` : ''})${host === '127.0.0.1' || host === 'localhost' || host === '::1' ? '; this machine only (--host 0.0.0.0 serves the network)' : ''}`,
  );
  const close = async () => {
    await app.close();
    await new Promise<void>((resolve) => server.close(() => resolve()));
    await store.close();
  };
  return { app, port, close, store };
}
