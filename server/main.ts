import { serve } from '@hono/node-server';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import type { AddressInfo } from 'node:net';
import { createApp } from './app.ts';
import { SqliteStore } from './store/sqlite.ts';
import { DEMO_TERRAIN, loadDemo } from './demo.ts';
import { loadDem, TerrainTiles } from './terrain.ts';

export const ROOT_DIR = new URL('..', import.meta.url).pathname;
export const CLIENT_DIST = join(ROOT_DIR, 'client', 'dist');

export interface ServerOptions {
  port: number;
  host?: string;
  dbPath: string;
  /** Build the client when client/dist is missing (what `npm start` does). */
  buildClient?: boolean;
  log?: (line: string) => void;
  /** Run the demo project's default run on start (default: unless SUBTHERM_DEMO_RUN=0). */
  demoRun?: boolean;
}

/** Builds the web client with Vite (client/vite.config.ts) into client/dist. */
export async function buildClient(log: (line: string) => void = () => {}): Promise<void> {
  log('building the web client (first start only) ...');
  const { build } = await import('vite');
  await build({ configFile: join(ROOT_DIR, 'client', 'vite.config.ts'), logLevel: 'warn' });
}

/** Opens the store (loading the demo on first start), builds the client if asked, and listens. */
export async function startServer(opts: ServerOptions) {
  const log = opts.log ?? ((l: string) => process.stdout.write(l + '\n'));
  if (opts.buildClient && !existsSync(join(CLIENT_DIST, 'index.html'))) await buildClient(log);
  const store = new SqliteStore(opts.dbPath);
  loadDemo(store);
  const terrain = new TerrainTiles(await loadDem(DEMO_TERRAIN));
  // The demo project's default run starts in the background unless SUBTHERM_DEMO_RUN=0.
  const demoRun = opts.demoRun ?? process.env.SUBTHERM_DEMO_RUN !== '0';
  const app = createApp({ store, terrain, clientDir: existsSync(join(CLIENT_DIST, 'index.html')) ? CLIENT_DIST : null, demoRun });
  const server = await new Promise<ReturnType<typeof serve>>((resolve) => {
    const s = serve({ fetch: app.fetch, port: opts.port, hostname: opts.host ?? '0.0.0.0' }, () => resolve(s));
  });
  const port = (server.address() as AddressInfo).port;
  log(`subtherm listening on http://localhost:${port} (database ${opts.dbPath})`);
  const close = () =>
    new Promise<void>((resolve) => {
      server.close(() => {
        store.close();
        resolve();
      });
    });
  return { app, port, close, store };
}
