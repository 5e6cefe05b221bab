import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import type { Hono } from 'hono';
import { createApp } from '../../server/app.ts';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { loadDemo, DEMO_TERRAIN } from '../../server/demo.ts';
import { loadDem, TerrainTiles } from '../../server/terrain.ts';
import { VERSION } from '../../shared/version.ts';
import pkg from '../../package.json' with { type: 'json' };

let app: Hono;
let store: SqliteStore;

beforeAll(async () => {
  const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-api-'));
  const clientDir = join(dir, 'client');
  mkdirSync(join(clientDir, 'assets'), { recursive: true });
  writeFileSync(join(clientDir, 'index.html'), '<!doctype html><title>map page</title>');
  writeFileSync(join(clientDir, 'assets', 'a.js'), 'export {}');
  store = new SqliteStore(join(dir, 'db.sqlite'));
  await loadDemo(store);
  app = createApp({ store, terrain: new TerrainTiles(await loadDem(DEMO_TERRAIN)), clientDir });
});
afterAll(async () => await store.close());

describe('the app: health, demo data sets, terrain tiles, JSON 404s and the map page', () => {
  it('reports health with the package version', async () => {
    const res = await app.request('/api/health');
    expect(res.status).toBe(200);
    const h = (await res.json()) as { ok: boolean; version: string; eventLoopDelayMs: { p50: number; p99: number; max: number } };
    expect(h).toMatchObject({ ok: true, version: VERSION });
    // Event-loop delay from Node's histogram, in ms: p50 ≤ p99 ≤ max, all finite and ≥ 0.
    const d = h.eventLoopDelayMs;
    expect(d.p50 >= 0 && d.p50 <= d.p99 && d.p99 <= d.max + 1e-9 && Number.isFinite(d.max)).toBe(true);
    expect(VERSION).toBe(pkg.version);
  });

  it('serves every demo data set under its stable id', async () => {
    for (const id of ['demo-sites', 'demo-samples', 'demo-faults', 'demo-wells', 'demo-model']) {
      const res = await app.request(`/api/datasets/${id}`);
      expect(res.status, id).toBe(200);
      const body = await res.json();
      if (id === 'demo-model') expect(body.layers.length).toBeGreaterThanOrEqual(3);
      else expect(body.features.length).toBeGreaterThan(0);
    }
    expect((await app.request('/api/datasets/demo-sites')).headers.get('content-type')).toContain('application/geo+json');
  });

  it('loads the demo once: a second start keeps the same records', async () => {
    const before = await store.listDatasets();
    await loadDemo(store);
    expect(await store.listDatasets()).toEqual(before);
  });

  it('serves terrain tiles as PNG and answers bad tiles with JSON 4xx', async () => {
    const ok = await app.request('/api/terrain/9/74/313.png');
    expect(ok.status).toBe(200);
    expect(ok.headers.get('content-type')).toBe('image/png');
    const bytes = new Uint8Array(await ok.arrayBuffer());
    expect([...bytes.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]); // PNG signature (ISO/IEC 15948)
    for (const [path, status] of [
      ['/api/terrain/1/0/0.png', 404],
      ['/api/terrain/9/74/313.jpg', 400],
      ['/api/terrain/a/b/c.png', 400],
      ['/api/terrain/30/1/1.png', 404],
    ] as const) {
      const res = await app.request(path);
      expect(res.status, path).toBe(status);
      expect((await res.json()).error.code).toBeTypeOf('string');
    }
  });

  it('answers unknown API routes and unknown data sets with JSON 404, never the map page', async () => {
    for (const path of ['/api/nope', '/api/datasets/does-not-exist', '/api/']) {
      const res = await app.request(path);
      expect(res.status, path).toBe(404);
      expect(res.headers.get('content-type')).toContain('application/json');
      expect((await res.json()).error.message).toBeTypeOf('string');
    }
    expect((await app.request('/api/health', { method: 'DELETE' })).status).toBe(404);
  });

  it('serves the map page on any other path, and built assets as files', async () => {
    for (const path of ['/', '/projects/abc', '/some/deep/link?x=1']) {
      const res = await app.request(path);
      expect(res.status).toBe(200);
      expect(await res.text()).toContain('map page');
    }
    const asset = await app.request('/assets/a.js');
    expect(asset.headers.get('content-type')).toContain('javascript');
    const escape = await app.request('/../../etc/passwd');
    expect(await escape.text()).toContain('map page');
  });
});
