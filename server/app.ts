import { Hono } from 'hono';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { extname, join, normalize } from 'node:path';
import { InputError } from '../shared/errors.ts';
import { VERSION } from '../shared/version.ts';
import { CAUTION } from '../shared/caution.ts';
import type { Store } from './store/types.ts';
import { TerrainTiles, TERRAIN_MAX_ZOOM, TERRAIN_MIN_ZOOM } from './terrain.ts';
import { DEMO_DATASETS } from './demo.ts';

export interface AppOptions {
  store: Store;
  terrain: TerrainTiles | null;
  /** Folder of the built client (index.html and assets); null serves a notice page. */
  clientDir: string | null;
}

const CONTENT_TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json',
  '.png': 'image/png',
  '.svg': 'image/svg+xml',
  '.woff2': 'font/woff2',
  '.map': 'application/json',
};

/** Errors under /api/ are always `{ error: { code, message, details } }`. */
function errorBody(code: string, message: string, details: unknown[] = []) {
  return { error: { code, message, details } };
}

/** Builds the Hono app (testable in-process with `app.request`). */
export function createApp(opts: AppOptions): Hono {
  const app = new Hono();

  app.onError((err, c) => {
    if (err instanceof InputError) {
      return c.json(errorBody(err.code, err.message, err.details), err.status as 400);
    }
    console.error(`[${new Date().toISOString()}] ${c.req.method} ${new URL(c.req.url).pathname}: ${err.stack ?? err.message}`);
    return c.json(errorBody('internal', 'internal server error'), 500);
  });

  app.get('/api/health', (c) => c.json({ ok: true, version: VERSION }));

  app.get('/api/config', (c) =>
    c.json({
      version: VERSION,
      caution: CAUTION,
      demo: {
        name: 'Orrindel Massif',
        invented: true,
        datasets: Object.fromEntries(DEMO_DATASETS.map((d) => [d.kind, d.id])),
      },
      terrain: opts.terrain
        ? { tiles: '/api/terrain/{z}/{x}/{y}.png', bounds: opts.terrain.bbox, minzoom: TERRAIN_MIN_ZOOM, maxzoom: TERRAIN_MAX_ZOOM, encoding: 'mapbox', tileSize: 256 }
        : null,
    }),
  );

  app.get('/api/datasets', (c) => c.json({ datasets: opts.store.listDatasets() }));

  app.get('/api/datasets/:id', (c) => {
    const rec = opts.store.getDataset(c.req.param('id'));
    if (!rec) throw new InputError(`no data set with id "${c.req.param('id')}"`, [{ field: 'id', problem: 'not found' }], 'not_found', 404);
    const type = rec.kind === 'model' ? 'application/json' : 'application/geo+json';
    return c.body(rec.body, 200, { 'content-type': type, etag: `"${rec.contentHash}"` });
  });

  app.get('/api/terrain/:z/:x/:y', (c) => {
    const { z, x } = c.req.param();
    const yFile = c.req.param('y');
    const m = /^(\d+)\.png$/.exec(yFile);
    const zi = Number(z), xi = Number(x);
    if (!m || !/^\d+$/.test(z) || !/^\d+$/.test(x)) {
      throw new InputError('terrain tiles are /api/terrain/{z}/{x}/{y}.png with integer z, x, y', [{ field: 'path', problem: `got ${z}/${x}/${yFile}` }], 'bad_tile', 400);
    }
    const png = opts.terrain?.tile(zi, xi, Number(m[1])) ?? null;
    if (!png) throw new InputError(`no terrain tile ${z}/${x}/${m[1]}`, [{ field: 'tile', problem: `outside the terrain or zoom ${TERRAIN_MIN_ZOOM}–${TERRAIN_MAX_ZOOM}` }], 'tile_not_found', 404);
    return c.body(new Uint8Array(png), 200, { 'content-type': 'image/png', 'cache-control': 'public, max-age=3600' });
  });

  app.all('/api/*', (c) => c.json(errorBody('not_found', `no such API route: ${c.req.method} ${new URL(c.req.url).pathname}`), 404));

  // Every other path serves the client: a built asset when it exists, else the map page (so links open the map).
  app.get('*', (c) => {
    if (!opts.clientDir) {
      return c.html('<!doctype html><title>subtherm</title><p>The web client is not built yet: run <code>npm run build</code>, or <code>npm start</code>.</p>');
    }
    const path = decodeURIComponent(new URL(c.req.url).pathname);
    const rel = normalize(path).replace(/^(\.\.[/\\])+/, '');
    const file = join(opts.clientDir, rel);
    if (file.startsWith(opts.clientDir) && rel !== '/' && existsSync(file) && statSync(file).isFile()) {
      const type = CONTENT_TYPES[extname(file)] ?? 'application/octet-stream';
      const immutable = rel.startsWith('/assets/');
      return c.body(readFileSync(file), 200, { 'content-type': type, 'cache-control': immutable ? 'public, max-age=31536000, immutable' : 'no-cache' });
    }
    return c.body(readFileSync(join(opts.clientDir, 'index.html')), 200, { 'content-type': CONTENT_TYPES['.html'], 'cache-control': 'no-cache' });
  });

  return app;
}
