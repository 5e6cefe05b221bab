// Removing a project's terrain: only with the project's edit token (401 without, 403 with another project's or
// on the read-only demo), 404 when there is none; afterwards the project lists no terrain, its tiles answer 404 and
// its storage no longer counts the DEM's pixels.
import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { DEMO_TERRAIN } from '../../server/demo.ts';
import { tileXFromLng, tileYFromLat } from '../../shared/grid/webmercator.ts';

let t: TestApp;
let pid: string;
let token: string;
let otherToken: string;

const del = (project: string, headers: Record<string, string>) => t.app.request(`/api/projects/${project}/terrain`, { method: 'DELETE', headers });
const listing = async () =>
  (await (await t.app.request(`/api/projects/${pid}/datasets`)).json()) as { terrain: { source: { tiles: string[] } } | null; storage: { bytes: number } };

beforeAll(async () => {
  t = await startTestApp('terrain-delete');
  ({ id: pid, editToken: token } = (await (await t.post('/api/projects', { title: 'terrain delete' })).json()) as { id: string; editToken: string });
  ({ editToken: otherToken } = (await (await t.post('/api/projects', { title: 'another' })).json()) as { editToken: string });
  const up = await t.app.request(`/api/projects/${pid}/terrain?name=Island`, {
    method: 'POST',
    headers: { 'content-type': 'image/tiff', authorization: `Bearer ${token}` },
    body: new Uint8Array(readFileSync(DEMO_TERRAIN)),
  });
  expect(up.status).toBe(201);
});
afterAll(() => t.close());

describe('DELETE /api/projects/:id/terrain', () => {
  it('needs the edit token of that project', async () => {
    expect((await del(pid, {})).status).toBe(401);
    expect((await del(pid, { authorization: `Bearer ${otherToken}` })).status).toBe(403);
    expect((await del('demo', { authorization: `Bearer ${token}` })).status).toBe(403);
    expect((await listing()).terrain).not.toBeNull();
  });

  it('removes the terrain, its tiles and its share of the storage; a second delete finds none', async () => {
    const before = await listing();
    // The demo DEM is 410 × 408 Float32 cells.
    expect(before.storage.bytes).toBe(410 * 408 * 4);
    const tile = before.terrain!.source.tiles[0].replace('{z}/{x}/{y}', `8/${Math.floor(tileXFromLng(-127.9, 8))}/${Math.floor(tileYFromLat(-37.95, 8))}`);
    expect((await t.app.request(tile)).status).toBe(200);
    const res = await del(pid, { authorization: `Bearer ${token}` });
    expect(res.status).toBe(200);
    expect(await res.json()).toEqual({ id: pid, terrain: null, removed: true });
    const after = await listing();
    expect(after.terrain).toBeNull();
    expect(after.storage.bytes).toBe(0);
    expect((await t.app.request(`/api/projects/${pid}/terrain`)).status).toBe(404);
    expect((await t.app.request(tile)).status).toBe(404);
    const again = await del(pid, { authorization: `Bearer ${token}` });
    expect(again.status).toBe(404);
    expect(((await again.json()) as { error: { code: string } }).error.code).toBe('terrain_not_found');
  });
});
