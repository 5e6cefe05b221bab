// A run with interpolation.anisotropy 'auto' through the real run worker: its stored summary carries the directional
// semivariograms, the variogram map, the fitted angle and ratio and whether the kriging used them, in the run
// contract's shape (shared/schema/run.ts, published in OpenAPI); a bad value is refused naming the field.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestApp, type TestApp } from '../helpers/app.ts';
import { runSummarySchema } from '../../shared/schema/run.ts';

let t: TestApp;
beforeAll(async () => {
  t = await startTestApp('anisotropy-run');
});
afterAll(() => t.close());

describe('runs with an estimated anisotropy', () => {
  it('the summary records the estimate, the angle convention and whether it was used', async () => {
    const res = await t.post('/api/runs', {
      sites: 'demo-sites',
      model: 'demo-model',
      realizations: 4,
      seed: 21,
      grid: { cellKm: 10 },
      interpolation: { method: 'kriging', anisotropy: 'auto', directions: { azimuthsDeg: [0, 60, 120], toleranceDeg: 30 } },
    });
    expect(res.status).toBe(202);
    const { id } = (await res.json()) as { id: string };
    const run = await t.waitEnd(id);
    expect(run.status).toBe('done');
    const view = (await (await t.app.request(`/api/runs/${id}`)).json()) as { summary: unknown };
    const v = runSummarySchema.parse(view.summary).interpolation.variogram!;
    const est = v.anisotropyEstimate!;
    // The request's direction classes (interpolation.directions) are the ones the estimate was fitted to.
    expect(est.directions.map((d) => d.azimuthDeg)).toEqual([0, 60, 120]);
    expect([est.toleranceDeg, est.bandwidthKm]).toEqual([30, null]);
    expect(est.directions.every((d) => d.pairs >= 30 && d.lags.length >= 3)).toBe(true);
    expect(est.angleDeg).toBeGreaterThanOrEqual(0);
    expect(est.angleDeg).toBeLessThan(180);
    expect(est.map.gamma).toHaveLength(est.map.size * est.map.size);
    expect(est.used).toBe(est.cvRmse.anisotropic < est.cvRmse.isotropic);
    expect(v.anisotropy).toEqual(est.used ? { angleDeg: est.angleDeg, ratio: est.ratio } : null);
    const bad = await t.post('/api/runs', { sites: 'demo-sites', model: 'demo-model', interpolation: { method: 'kriging', anisotropy: 'sideways' } });
    expect(bad.status).toBe(422);
    expect(await bad.text()).toContain('"field":"anisotropy"');
    // Direction classes out of range, or without anisotropy 'auto': 422 naming the member.
    for (const [interpolation, field, text] of [
      [{ method: 'kriging', anisotropy: 'auto', directions: { azimuthsDeg: [0, 200] } }, 'directions.azimuthsDeg.1', 'an azimuth must be < 180°'],
      [{ method: 'kriging', anisotropy: 'auto', directions: { toleranceDeg: 95 } }, 'directions.toleranceDeg', '90'],
      [{ method: 'kriging', directions: { bandwidthKm: 10 } }, 'directions.bandwidthKm', 'use them with anisotropy auto'],
    ] as const) {
      const r = await t.post('/api/runs', { sites: 'demo-sites', model: 'demo-model', interpolation });
      expect(r.status).toBe(422);
      const body = (await r.json()) as { error: { details: { field: string; problem: string }[] } };
      expect(body.error.details).toEqual([expect.objectContaining({ field: expect.stringContaining(field), problem: expect.stringContaining(text) })]);
    }
  }, 120_000);
});
