import { describe, it, expect, vi, afterEach, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { runCliJson } from '../helpers/cli-run.ts';
import { anisotropyEstimateSchema } from '../../shared/schema/anisotropy.ts';
import { prng } from '../helpers/prng.ts';

// `--anisotropy auto` end to end through the command line: the estimate (recovery of a known angle and ratio is
// checked against a Cholesky-drawn field in interp-anisotropy.test.ts) reaches the JSON in the published shape, the
// kriging uses it only when leave-one-out RMSE improves, and bad values exit 2 naming the option.

let dir = '';
const file = (name: string, body: unknown) => {
  const p = join(dir, name);
  writeFileSync(p, JSON.stringify(body));
  return p;
};
const site = (id: string, lon: number, lat: number, props: Record<string, unknown>) => ({
  type: 'Feature',
  geometry: { type: 'Point', coordinates: [lon, lat] },
  properties: { id, ...props },
});

const run = runCliJson;

// Heat flow varying fast across azimuth 60° (a 25 km wave along the minor axis, azimuth 150°) and slowly along it:
// stripes whose long axis runs at 60° clockwise from north. About 88 km × 111 km per degree at 38° S.
const MAJOR_DEG = 60;
const sites: unknown[] = [];
beforeAll(() => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'aniso-cli-'));
  const r = prng(11);
  const t = (MAJOR_DEG * Math.PI) / 180;
  for (let i = 0; i < 220; i++) {
    const lon = -128 + r(),
      lat = -38 + r();
    const x = (lon + 128) * 87.8,
      y = (lat + 38) * 111.0;
    const across = x * Math.cos(t) - y * Math.sin(t),
      along = x * Math.sin(t) + y * Math.cos(t);
    sites.push(site(`a${i}`, lon, lat, { heatFlowMWm2: 65 + 12 * Math.sin((2 * Math.PI * across) / 25) + 3 * Math.sin(along / 40) + 2 * (r() - 0.5) }));
  }
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));
afterEach(() => vi.restoreAllMocks());

describe('--anisotropy auto|none|ANGLE,RATIO', () => {
  it('interpolate: the estimate in the JSON (published shape), near the stripes’ azimuth, used by the kriging', async () => {
    const pts = file('stripes.geojson', { type: 'FeatureCollection', features: sites });
    const { code, json } = await run('interpolate', ['--points', pts, '--method', 'kriging', '--size', '8x8', '--anisotropy', 'auto', '--max-lag-km', '60']);
    expect(code).toBe(0);
    const est = anisotropyEstimateSchema.parse(json.variogram.anisotropyEstimate);
    const off = Math.abs(((est.angleDeg - MAJOR_DEG + 90) % 180) - 90);
    expect(off).toBeLessThan(15);
    expect(est.ratio).toBeLessThan(0.6);
    expect(est.directions.map((d) => d.azimuthDeg)).toEqual([0, 45, 90, 135]);
    expect(est.map.gamma.length).toBe(est.map.size ** 2);
    expect(est.used).toBe(est.cvRmse.anisotropic < est.cvRmse.isotropic);
    expect(est.used).toBe(true);
    expect(json.variogram.anisotropy).toEqual({ angleDeg: est.angleDeg, ratio: est.ratio });
    expect(json.crossValidation.rmse).toBe(est.cvRmse.anisotropic);
  });

  it('none is isotropic; a bad value and too few points exit 2 naming the option (too few: the direction and its count)', async () => {
    const pts = file('stripes2.geojson', { type: 'FeatureCollection', features: sites });
    const none = await run('interpolate', ['--points', pts, '--method', 'kriging', '--size', '4x4', '--anisotropy', 'none']);
    expect(none.code).toBe(0);
    expect(none.json.variogram.anisotropy).toBeNull();
    expect(none.json.variogram.anisotropyEstimate).toBeUndefined();
    const bad = await run('interpolate', ['--points', pts, '--method', 'kriging', '--anisotropy', 'sideways']);
    expect(bad.code).toBe(2);
    expect(bad.json.error.message).toContain('ANGLE_DEG,RATIO with ratio in (0, 1], auto or none');
    const few = file('few.geojson', { type: 'FeatureCollection', features: sites.slice(0, 9) });
    const sparse = await run('interpolate', ['--points', few, '--method', 'kriging', '--size', '4x4', '--anisotropy', 'auto', '--variogram', 'spherical']);
    expect(sparse.code).toBe(2);
    expect(sparse.json.error.message).toMatch(/direction \d+° \(± 22\.5°\) has \d+ pair\(s\)/);
  });

  it('simulate --at: the estimate of the normal scores in the JSON variogram', async () => {
    const pts = file('stripes3.geojson', { type: 'FeatureCollection', features: sites });
    const at = file('at.geojson', { type: 'FeatureCollection', features: [site('t1', -127.5, -37.5, {})] });
    const { code, json } = await run('simulate', [
      '--points',
      pts,
      '--at',
      at,
      '--realizations',
      '3',
      '--seed',
      '5',
      '--anisotropy',
      'auto',
      '--max-lag-km',
      '60',
    ]);
    expect(code).toBe(0);
    const est = anisotropyEstimateSchema.parse(json.variogram.anisotropyEstimate);
    expect(json.variogram.anisotropy).toEqual(est.used ? { angleDeg: est.angleDeg, ratio: est.ratio } : null);
    expect(json.realizations.length).toBe(3);
  });
});
