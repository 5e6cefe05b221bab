// Replacing a project's data set: an upload with replace=<dsId> takes that data set's place and name, the old one
// is detached (its content kept while a run names it); a replacement of another kind, or one that fails validation,
// changes nothing.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';

let t: TestApp;
let pid: string;
let token: string;

// Invented heat-flow sites in open ocean (about 12° S, 95° W), far from the demo.
const csv = (q: number) =>
  ['longitude,latitude,id,heatFlowMWm2', `-95.2,-12.1,b1,${q}`, '-95.0,-12.3,b2,71', '-94.8,-12.0,b3,66', '-95.1,-11.8,b4,58'].join('\n');

const auth = () => ({ authorization: `Bearer ${token}` });
const upload = (kind: string, body: string, query: string) =>
  t.app.request(`/api/projects/${pid}/datasets?kind=${kind}${query}`, { method: 'POST', headers: { 'content-type': 'text/csv', ...auth() }, body });
const list = async () =>
  ((await (await t.app.request(`/api/projects/${pid}/datasets`)).json()) as { datasets: { id: string; kind: string; name: string; featureCount: number }[] })
    .datasets;

beforeAll(async () => {
  t = await startTestApp('replace');
  const res = await t.post('/api/projects', { title: 'Bellwether Rise survey' });
  ({ id: pid, editToken: token } = (await res.json()) as { id: string; editToken: string });
});
afterAll(() => t.close());

describe('POST /api/projects/:id/datasets?replace=<dsId>', () => {
  it('puts the upload in place of the data set, under its name, and detaches the old one', async () => {
    const first = (await (await upload('sites', csv(62), '&name=Leg%201%20sites')).json()) as { id: string };
    // A run names the first version: its content stays stored after the replacement.
    const run = await t.app.request(`/api/projects/${pid}/runs`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', ...auth() },
      body: JSON.stringify({
        sites: first.id,
        model: { surfaceTemperatureC: 10, layers: [{ name: 'crust', bottomKm: 35, conductivityWmK: 2.5, heatProductionUWm3: 1, densityKgM3: 2800 }] },
        interpolation: { method: 'idw' },
        grid: { cellKm: 10 },
      }),
    });
    expect(run.status).toBe(202);
    await t.waitEnd(((await run.json()) as { id: string }).id);
    const res = await upload('sites', csv(64), `&replace=${first.id}`);
    expect(res.status).toBe(201);
    const d = (await res.json()) as { id: string; name: string; replaced: string; featureCount: number };
    expect(d.id).not.toBe(first.id);
    expect(d).toMatchObject({ name: 'Leg 1 sites', replaced: first.id, featureCount: 4 });
    expect((await list()).map((x) => [x.id, x.name])).toEqual([[d.id, 'Leg 1 sites']]);
    expect((await t.app.request(`/api/projects/${pid}/datasets/${first.id}`)).status).toBe(404);
    // The run's copy stays: the content is still stored under its id.
    expect((await t.app.request(`/api/datasets/${first.id}`)).status).toBe(200);
  });

  it('refuses a replacement of another kind, or one that fails validation, and changes nothing', async () => {
    const before = await list();
    const [d] = before;
    const wrongKind = await upload('samples', csv(65), `&replace=${d.id}`);
    expect(wrongKind.status).toBe(422);
    const e = ((await wrongKind.json()) as { error: { code: string; details: { field: string; problem: string }[] } }).error;
    expect(e.code).toBe('wrong_dataset_kind');
    expect(e.details).toEqual([{ field: 'kind', problem: `expected sites to replace ${d.id}` }]);
    const bad = await upload('sites', csv(65).replace('-12.1', 'south'), `&replace=${d.id}`);
    expect(bad.status).toBe(422);
    const unknown = await upload('sites', csv(66), '&replace=ds_nothing_here');
    expect(unknown.status).toBe(404);
    expect(((await unknown.json()) as { error: { details: { field: string }[] } }).error.details[0].field).toBe('replace');
    expect(await list()).toEqual(before);
  });

  it('renames on a replacement with the same content and a new name; takes over a data set already holding the content', async () => {
    const [d] = await list();
    const same = await (await t.app.request(`/api/datasets/${d.id}`)).text();
    // The same content again, with a name: nothing is replaced, the data set is renamed (as a plain upload would be).
    const renamed = await t.app.request(`/api/projects/${pid}/datasets?kind=sites&name=Leg%201%20sites%20(checked)&replace=${d.id}`, {
      method: 'POST',
      headers: { 'content-type': 'application/geo+json', ...auth() },
      body: same,
    });
    expect(renamed.status).toBe(200);
    expect(await renamed.json()).toMatchObject({ id: d.id, name: 'Leg 1 sites (checked)', deduplicated: true });
    expect((await list()).map((x) => [x.id, x.name])).toEqual([[d.id, 'Leg 1 sites (checked)']]);
    // Content the project already holds under another name: that data set takes the replaced one's place and name.
    const other = (await (await upload('sites', csv(77), '&name=Leg%202%20sites')).json()) as { id: string };
    const held = await upload('sites', csv(77), `&replace=${d.id}`);
    expect(held.status).toBe(200);
    expect(await held.json()).toMatchObject({ id: other.id, name: 'Leg 1 sites (checked)', replaced: d.id, deduplicated: true });
    expect((await list()).map((x) => [x.id, x.name])).toEqual([[other.id, 'Leg 1 sites (checked)']]);
  });

  it('lets one of two concurrent replacements of a data set win; the other is 409 and leaves no content behind', async () => {
    const [d] = await list();
    const bodies = [csv(83), csv(84)];
    const answers = await Promise.all(bodies.map(async (b) => await upload('sites', b, `&replace=${d.id}`)));
    const statuses = answers.map((r) => r.status);
    expect([...statuses].sort()).toEqual([201, 409]);
    const won = statuses.indexOf(201);
    const lost = 1 - won;
    const winner = (await answers[won].json()) as { id: string };
    const e = ((await answers[lost].json()) as { error: { code: string; details: { field: string }[] } }).error;
    expect(e.code).toBe('dataset_changed');
    expect(e.details[0].field).toBe('replace');
    expect((await list()).map((x) => [x.id, x.name])).toEqual([[winner.id, 'Leg 1 sites (checked)']]);
    // The losing upload's content was stored for it alone and is gone again: a new project storing the same CSV
    // stores it afresh (deduplicated false), while the winner's content is found (deduplicated true).
    const p2 = (await (await t.post('/api/projects', { title: 'Bellwether Rise check' })).json()) as { id: string; editToken: string };
    const put2 = async (body: string) =>
      (await (
        await t.app.request(`/api/projects/${p2.id}/datasets?kind=sites`, {
          method: 'POST',
          headers: { 'content-type': 'text/csv', authorization: `Bearer ${p2.editToken}` },
          body,
        })
      ).json()) as { deduplicated: boolean };
    expect((await put2(bodies[lost])).deduplicated).toBe(false);
    expect((await put2(bodies[won])).deduplicated).toBe(true);
  });

  it('answers 409 when the data set is removed by another request after the upload was read (same content too)', async () => {
    const [d] = await list();
    const same = await (await t.app.request(`/api/datasets/${d.id}`)).text();
    // Another request removes the data set between this one's validation and its write: the store's content lookup,
    // the first step after validation, is where it slips in.
    const store = t.store;
    const lookup = store.findDatasetByContent.bind(store);
    store.findDatasetByContent = async (kind, hash) => {
      store.findDatasetByContent = lookup;
      await store.detachProjectDataset(pid, d.id);
      return lookup(kind, hash);
    };
    try {
      const res = await t.app.request(`/api/projects/${pid}/datasets?kind=sites&name=Leg%201%20sites%20(again)&replace=${d.id}`, {
        method: 'POST',
        headers: { 'content-type': 'application/geo+json', ...auth() },
        body: same,
      });
      expect(res.status).toBe(409);
      expect(((await res.json()) as { error: { code: string } }).error.code).toBe('dataset_changed');
    } finally {
      store.findDatasetByContent = lookup;
    }
    expect(await list()).toEqual([]);
    // Put it back for the next test.
    await store.attachDataset(pid, d.id, d.name);
  });

  it('counts the replaced data set as freed: a project at its storage limit takes a replacement of the same size', async () => {
    // The stored size of one upload of these sites (csv(q) has the same length for every two-digit q).
    const sizeOf = async (app: TestApp, id: string, token: string) => {
      const r = await app.app.request(`/api/projects/${id}/datasets?kind=sites`, {
        method: 'POST',
        headers: { 'content-type': 'text/csv', authorization: `Bearer ${token}` },
        body: csv(70),
      });
      expect(r.status).toBe(201);
      return (await r.json()) as { id: string; bytes: number };
    };
    const p0 = (await (await t.post('/api/projects', { title: 'Bellwether Rise sizes' })).json()) as { id: string; editToken: string };
    const { bytes } = await sizeOf(t, p0.id, p0.editToken);
    expect(bytes).toBeGreaterThan(0);
    const q = await startTestApp('replace-quota', { limits: { maxProjectStorageBytes: bytes } });
    try {
      const p = (await (await q.post('/api/projects', { title: 'Bellwether Rise quota' })).json()) as { id: string; editToken: string };
      const first = await sizeOf(q, p.id, p.editToken); // exactly at the limit
      const put = (body: string, query: string) =>
        q.app.request(`/api/projects/${p.id}/datasets?kind=sites${query}`, {
          method: 'POST',
          headers: { 'content-type': 'text/csv', authorization: `Bearer ${p.editToken}` },
          body,
        });
      // New content of the same size is over the limit …
      const extra = await put(csv(71), '');
      expect(extra.status).toBe(413);
      expect(((await extra.json()) as { error: { code: string } }).error.code).toBe('project_quota_exceeded');
      // … but a same-size replacement is not: the data set it replaces is detached.
      const rep = await put(csv(72), `&replace=${first.id}`);
      expect(rep.status).toBe(201);
      expect(((await rep.json()) as { replaced: string }).replaced).toBe(first.id);
    } finally {
      await q.close();
    }
  });
});
