/**
 * Every path outside /api/ serves the web client: a built asset when it exists (hashed assets cached for a year),
 * else the map page, so links such as /p/<project> open the map. Without a built client, a notice page.
 */
import type { Hono } from 'hono';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { extname, join, normalize } from 'node:path';

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

/** Registers the catch-all GET; `clientDir` is the built client's folder (index.html and assets), or null. */
export function staticClientRoutes(app: Hono, clientDir: string | null): void {
  app.get('*', (c) => {
    if (!clientDir) {
      return c.html('<!doctype html><title>subtherm</title><p>The web client is not built yet: run <code>npm run build</code>, or <code>npm start</code>.</p>');
    }
    const path = decodeURIComponent(new URL(c.req.url).pathname);
    const rel = normalize(path).replace(/^(\.\.[/\\])+/, '');
    const file = join(clientDir, rel);
    if (file.startsWith(clientDir) && rel !== '/' && existsSync(file) && statSync(file).isFile()) {
      const type = CONTENT_TYPES[extname(file)] ?? 'application/octet-stream';
      const immutable = rel.startsWith('/assets/');
      return c.body(readFileSync(file), 200, { 'content-type': type, 'cache-control': immutable ? 'public, max-age=31536000, immutable' : 'no-cache' });
    }
    return c.body(readFileSync(join(clientDir, 'index.html')), 200, { 'content-type': CONTENT_TYPES['.html'], 'cache-control': 'no-cache' });
  });
}
