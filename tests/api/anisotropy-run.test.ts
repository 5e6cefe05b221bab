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
      interpolation: { method: 'kriging', anisotropy: 'auto' },
    });
    expect(res.status).toBe(202);
    const { id } = (await res.json()) as { id: string };
    const run = await t.waitEnd(id);
    expect(run.status).toBe('done');
    const view = (await (await t.app.request(`/api/runs/${id}`)).json()) as { summary: unknown };
    const v = runSummarySchema.parse(view.summary).interpolation.variogram!;
    const est = v.anisotropyEstimate!;
    expect(est.directions.map((d) => d.azimuthDeg)).toEqual([0, 45, 90, 135]);
    expect(est.directions.every((d) => d.pairs >= 30 && d.lags.length >= 3)).toBe(true);
    expect(est.angleDeg).toBeGreaterThanOrEqual(0);
    expect(est.angleDeg).toBeLessThan(180);
    expect(est.map.gamma).toHaveLength(est.map.size * est.map.size);
    expect(est.used).toBe(est.cvRmse.anisotropic < est.cvRmse.isotropic);
    expect(v.anisotropy).toEqual(est.used ? { angleDeg: est.angleDeg, ratio: est.ratio } : null);
    const bad = await t.post('/api/runs', { sites: 'demo-sites', model: 'demo-model', interpolation: { method: 'kriging', anisotropy: 'sideways' } });
    expect(bad.status).toBe(422);
    expect(await bad.text()).toContain('"field":"anisotropy"');
  }, 120_000);
});
