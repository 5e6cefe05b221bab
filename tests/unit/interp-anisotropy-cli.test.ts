import { describe, it, expect, vi, afterEach, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { runCliJson } from '../helpers/cli.ts';
import { anisotropyEstimateSchema } from '../../shared/schema/anisotropy.ts';
import { prng } from '../helpers/prng.ts';
import { requireGstat } from '../helpers/gstat.ts';
import { localProjectionFor, lonLatToLocalKm } from '../../shared/interp/projection.ts';

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

const run = (verb: string, args: string[]) => runCliJson([verb, ...args]);

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

// The direction classes chosen on the command line reach the directional semivariograms the estimate is fitted to.
// Checked against R gstat (Debian r-cran-gstat; Pebesma 2004; docs/sources.md#directional-variogram):
// variogram(z ~ 1, alpha = …, tol.hor = …, cutoff, width) on the sites in the same local km coordinates the
// engine uses (the transverse Mercator frame centred on the sites' envelope, shared/interp/projection.ts). gstat has
// no bandwidth, so the bandwidth's pair counts are checked by counting every pair in this file.
describe('--directions, --angle-tolerance, --bandwidth-km', () => {
  const AZ = [15, 75, 105, 165],
    TOL = 15,
    CUT = 60,
    WIDTH = 7.5;
  const local = () => {
    const f = sites as { geometry: { coordinates: [number, number] }; properties: { heatFlowMWm2: number } }[];
    const lon = Float64Array.from(f, (s) => s.geometry.coordinates[0]),
      lat = Float64Array.from(f, (s) => s.geometry.coordinates[1]);
    const x = new Float64Array(f.length),
      y = new Float64Array(f.length);
    lonLatToLocalKm(localProjectionFor(lon, lat), lon, lat, x, y);
    return { x, y, z: Float64Array.from(f, (s) => s.properties.heatFlowMWm2) };
  };
  const args = (pts: string) => [
    '--points',
    pts,
    '--method',
    'kriging',
    '--size',
    '4x4',
    '--anisotropy',
    'auto',
    '--lag-km',
    `${WIDTH}`,
    '--max-lag-km',
    `${CUT}`,
  ];

  it('interpolate: the estimate is fitted to the given azimuths and tolerance; np, distance and γ equal gstat to 1e-9', async () => {
    requireGstat();
    const pts = file('dirs.geojson', { type: 'FeatureCollection', features: sites });
    const { code, json } = await run('interpolate', [...args(pts), '--directions', AZ.join(','), '--angle-tolerance', `${TOL}`]);
    expect(code).toBe(0);
    const est = anisotropyEstimateSchema.parse(json.variogram.anisotropyEstimate);
    expect(est.directions.map((d) => d.azimuthDeg)).toEqual(AZ);
    expect(est.toleranceDeg).toBe(TOL);
    expect(est.bandwidthKm).toBeNull();
    const { x, y, z } = local();
    writeFileSync(join(dir, 'dirs.csv'), 'x,y,z\n' + Array.from(x, (xi, i) => `${xi},${y[i]},${z[i]}`).join('\n'));
    writeFileSync(
      join(dir, 'dirs.R'),
      [
        'suppressMessages({library(sp); library(gstat)})',
        `p <- read.csv("${join(dir, 'dirs.csv')}"); coordinates(p) <- ~x+y`,
        `v <- variogram(z ~ 1, p, cutoff = ${CUT}, width = ${WIDTH}, alpha = c(${AZ.join(',')}), tol.hor = ${TOL})`,
        'for (i in seq_len(nrow(v))) cat(sprintf("%.17g %.17g %.17g %.17g\\n", v$dir.hor[i], v$np[i], v$dist[i], v$gamma[i]))',
      ].join('\n'),
    );
    const out = spawnSync('Rscript', [join(dir, 'dirs.R')], { encoding: 'utf8' });
    expect(out.status, out.stderr).toBe(0);
    const ref = out.stdout
      .trim()
      .split('\n')
      .map((l) => l.trim().split(/\s+/).map(Number));
    const ours = est.directions.flatMap((d) => d.lags.map((l) => [d.azimuthDeg, l.pairs, l.lagKm, l.gamma]));
    expect(ref.length).toBeGreaterThan(20);
    expect(ours.length).toBe(ref.length);
    ref.forEach((r, k) => {
      expect(ours[k][0]).toBe(r[0]);
      expect(ours[k][1]).toBe(r[1]);
      expect(Math.abs(ours[k][2] - r[2])).toBeLessThan(1e-9 * r[2]);
      expect(Math.abs(ours[k][3] - r[3])).toBeLessThan(1e-9 * r[3]);
    });
  });

  it('a bandwidth keeps the pairs whose lag lies within it of the class line (every pair counted here)', async () => {
    const pts = file('band.geojson', { type: 'FeatureCollection', features: sites });
    const BAND = 4;
    const { code, json } = await run('interpolate', [...args(pts), '--directions', '0,90', '--angle-tolerance', '45', '--bandwidth-km', `${BAND}`]);
    expect(code).toBe(0);
    const est = anisotropyEstimateSchema.parse(json.variogram.anisotropyEstimate);
    expect(est.bandwidthKm).toBe(BAND);
    const { x, y } = local();
    for (const d of est.directions) {
      const ux = Math.sin((d.azimuthDeg * Math.PI) / 180),
        uy = Math.cos((d.azimuthDeg * Math.PI) / 180);
      const counts = new Map<number, number>();
      for (let i = 0; i < x.length; i++)
        for (let j = 0; j < i; j++) {
          const hx = x[i] - x[j],
            hy = y[i] - y[j],
            h = Math.hypot(hx, hy);
          // Within the cutoff, within 45° of the line, within the bandwidth of it.
          if (!(h > 0) || h > CUT || Math.abs(hx * ux + hy * uy) < Math.SQRT1_2 * h || Math.abs(hx * uy - hy * ux) > BAND) continue;
          const b = Math.min(CUT / WIDTH - 1, Math.floor(h / WIDTH));
          counts.set(b, (counts.get(b) ?? 0) + 1);
        }
      const byClass = [...counts.entries()].sort((a, b) => a[0] - b[0]).map((e) => e[1]);
      expect(d.lags.map((l) => l.pairs)).toEqual(byClass);
      expect(d.pairs).toBeGreaterThan(30);
    }
  });

  it('bad values exit 2 naming the flag, the value and the limit; without --anisotropy auto they are refused', async () => {
    const pts = file('bad-dirs.geojson', { type: 'FeatureCollection', features: sites });
    const base = ['--points', pts, '--method', 'kriging', '--size', '4x4', '--anisotropy', 'auto'];
    for (const [flag, value, text] of [
      ['--directions', '0,200', /--directions 0,200: an azimuth must be < 180°/],
      ['--directions', '30', /--directions 30: at least 2 azimuths/],
      ['--directions', '10,10', /the azimuths must be distinct/],
      ['--directions', '0,east', /--directions 0,east/],
      ['--angle-tolerance', '0', /--angle-tolerance 0: .*>0/],
      ['--angle-tolerance', '120', /--angle-tolerance 120: .*<=90/],
      ['--bandwidth-km', '-3', /--bandwidth-km -3: .*>0/],
    ] as const) {
      const bad = await run('interpolate', [...base, `${flag}=${value}`]);
      expect(bad.code, `${flag} ${value}`).toBe(2);
      expect(bad.json.error.message).toMatch(text);
      expect(bad.json.error.details[0].field).toBe(flag.slice(2));
    }
    const noAuto = await run('interpolate', ['--points', pts, '--method', 'kriging', '--size', '4x4', '--directions', '0,90', '--bandwidth-km', '5']);
    expect(noAuto.code).toBe(2);
    expect(noAuto.json.error.message).toMatch(/^--directions, --bandwidth-km without --anisotropy auto/);
    expect(noAuto.json.error.details.map((d: { field: string }) => d.field)).toEqual(['directions', 'bandwidth-km']);
    const at = file('at-dirs.geojson', { type: 'FeatureCollection', features: [site('t1', -127.5, -37.5, {})] });
    const sim = await run('simulate', ['--points', pts, '--at', at, '--realizations', '2', '--seed', '1', '--anisotropy', 'none', '--angle-tolerance', '20']);
    expect(sim.code).toBe(2);
    expect(sim.json.error.details[0].field).toBe('angle-tolerance');
  });

  it('simulate --at: the estimate of the normal scores uses the given classes', async () => {
    const pts = file('dirs-sim.geojson', { type: 'FeatureCollection', features: sites });
    const at = file('at-dirs2.geojson', { type: 'FeatureCollection', features: [site('t1', -127.5, -37.5, {})] });
    const { code, json } = await run('simulate', [
      ...['--points', pts, '--at', at, '--realizations', '2', '--seed', '3', '--anisotropy', 'auto', '--max-lag-km', '60'],
      ...['--directions', '20,80,140', '--angle-tolerance', '25', '--bandwidth-km', '15'],
    ]);
    expect(code).toBe(0);
    const est = anisotropyEstimateSchema.parse(json.variogram.anisotropyEstimate);
    expect(est.directions.map((d) => d.azimuthDeg)).toEqual([20, 80, 140]);
    expect([est.toleranceDeg, est.bandwidthKm]).toEqual([25, 15]);
  });
});
