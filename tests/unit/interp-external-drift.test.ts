import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { predictAtPoints, prepareInterpolation, interpolateGrid, type PointData } from '../../shared/interp/interpolate.ts';
import { simulateAtPoints, simulateGrid } from '../../shared/interp/simulateField.ts';
import { localProjectionFor, lonLatToLocalKm } from '../../shared/interp/projection.ts';
import type { VariogramModel } from '../../shared/interp/variogram.ts';
import { writeGeoTiff } from '../../server/io/geotiff.ts';
import { httpStatusOf } from '../../server/http-status.ts';
import { runCliJson } from '../helpers/cli.ts';
import { bilinearCovariate, GSTAT_FRAME, sitesInFrame } from '../helpers/drift-fixtures.ts';
import { requireGstat, runRscript } from '../helpers/gstat.ts';

/**
 * Kriging with an external drift (docs/sources.md#external-drift): the mean is a₀ + a₁·s(x) with s a covariate grid.
 * Checked against R gstat's krige and krige.cv with the covariate as a drift term, formula z ~ s (Debian
 * r-cran-gstat; Pebesma 2004), to 1e-9. The covariate values gstat gets are computed in this file from the grid's
 * own formula: the grid holds s = 100 + 3·c + 2·r + 0.5·c·r at cell (column c, row r), a bilinear function of the
 * fractional cell position, so bilinear interpolation between cell centres reproduces it exactly anywhere inside,
 * and every node value is exact in float32 (multiples of 0.5 below 2²⁴).
 */

const FRAME = GSTAT_FRAME;
const { west: WEST, north: NORTH, d: D, nx: NX, ny: NY } = FRAME;
const sAt = (c: number, r: number) => 100 + 3 * c + 2 * r + 0.5 * c * r;
const { grid: driftGrid, at: covariateOf } = bilinearCovariate(FRAME, sAt, 'thickness.tif', 'm');

// Invented sites inside the grid: values following the covariate, a smooth field and noise.
const pts = sitesInFrame(FRAME, 2718, 45, 's', (lo, la, r) => 20 + 0.3 * covariateOf(lo, la) + 4 * Math.sin(lo * 20) * Math.cos(la * 15) + 2 * r());
const { lon, lat, values } = pts;
const n = pts.ids.length;
const targets = { ids: ['a', 'b', 'c', 'd'], lon: [-130.9, -130.5, -130.2, -130.0], lat: [-40.55, -40.8, -40.6, -41.1] };
const MODEL: VariogramModel = { model: 'spherical', nugget: 1.5, partialSill: 12, rangeKm: 35 };
const SILL = MODEL.nugget + MODEL.partialSill;
// Output grid = the drift grid's cells (cell centres coincide, so the covariate there is the node value).
const cells = [
  [5, 7],
  [30, 20],
  [52, 33],
];

describe('kriging with an external drift against R gstat (z ~ s)', () => {
  let dir = '';
  const ref: Record<string, number[]> = {};
  beforeAll(() => {
    requireGstat();
    dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'ked-gstat-'));
    const proj = localProjectionFor(lon, lat);
    const local = (lo: ArrayLike<number>, la: ArrayLike<number>) => {
      const x = new Float64Array(lo.length),
        y = new Float64Array(lo.length);
      lonLatToLocalKm(proj, lo, la, x, y);
      return { x, y };
    };
    const p = local(lon, lat);
    const cellLon = cells.map(([c]) => WEST + (c + 0.5) * D),
      cellLat = cells.map(([, rr]) => NORTH - (rr + 0.5) * D);
    const t = local([...targets.lon, ...cellLon], [...targets.lat, ...cellLat]);
    const ts = [...targets.lon.map((lo, i) => covariateOf(lo, targets.lat[i])), ...cells.map(([c, rr]) => sAt(c, rr))];
    writeFileSync(join(dir, 'p.csv'), 'x,y,s,z\n' + Array.from(p.x, (x, i) => `${x},${p.y[i]},${covariateOf(lon[i], lat[i])},${values[i]}`).join('\n'));
    writeFileSync(join(dir, 't.csv'), 'x,y,s\n' + Array.from(t.x, (x, i) => `${x},${t.y[i]},${ts[i]}`).join('\n'));
    const script = [
      'suppressMessages({library(sp); library(gstat)})',
      `p <- read.csv("${join(dir, 'p.csv')}"); coordinates(p) <- ~x+y`,
      `t <- read.csv("${join(dir, 't.csv')}"); coordinates(t) <- ~x+y`,
      'm <- vgm(12, "Sph", 35, 1.5)',
      'for (nm in c("Inf", "16")) { k <- krige(z ~ s, p, t, model = m, nmax = as.numeric(nm), debug.level = 0)',
      '  cat(paste0("pred-", nm), sprintf("%.17g", k$var1.pred), "\\n"); cat(paste0("var-", nm), sprintf("%.17g", k$var1.var), "\\n") }',
      'cv <- krige.cv(z ~ s, p, model = m, nfold = nrow(p), verbose = FALSE, debug.level = 0)',
      'cat("cv", sprintf("%.17g", cv$residual), "\\n")',
    ];
    writeFileSync(join(dir, 'ked.R'), script.join('\n'));
    for (const line of runRscript(join(dir, 'ked.R')).trim().split('\n')) {
      const [key, ...nums] = line.trim().split(/\s+/);
      ref[key] = nums.map(Number);
    }
  }, 300_000);
  afterAll(() => {
    if (dir !== '') rmSync(dir, { recursive: true, force: true });
  });

  for (const [nm, neighbors] of [
    ['Inf', 'all'],
    ['16', 16],
  ] as const)
    it(`targets, nmax = ${nm}: predictions and variances agree to 1e-9`, () => {
      const got = predictAtPoints(
        pts,
        { method: 'kriging', neighbors, variogram: MODEL, trend: 'external', externalDrift: driftGrid, crossValidation: false },
        targets,
      );
      expect(ref[`pred-${nm}`]).toHaveLength(targets.ids.length + cells.length);
      got.predictions.forEach((g, t) => {
        expect(Math.abs(g.value! - ref[`pred-${nm}`][t])).toBeLessThan(1e-9 * Math.abs(ref[`pred-${nm}`][t]));
        expect(Math.abs(g.sd! ** 2 - ref[`var-${nm}`][t])).toBeLessThan(1e-9 * SILL);
      });
      expect(got.variogram!.trend!.kind).toBe('external');
      // The least-squares trend in the covariate's units recovers the invented slope 0.3 per unit of s.
      expect(got.variogram!.trend!.ols!.covariate!.slope).toBeGreaterThan(0.2);
      expect(got.variogram!.trend!.ols!.covariate!.slope).toBeLessThan(0.4);
    });

  it("a grid on the drift grid's cells: the cells equal gstat to Float32 precision (1e-5); leave-one-out residuals equal krige.cv to 1e-8", () => {
    const bbox: [number, number, number, number] = [WEST, NORTH - NY * D, WEST + NX * D, NORTH];
    const res = interpolateGrid(pts, {
      method: 'kriging',
      neighbors: 'all',
      variogram: MODEL,
      trend: 'external',
      externalDrift: driftGrid,
      grid: { bbox, size: [NX, NY] },
    });
    cells.forEach(([c, rr], k) => {
      const t = targets.ids.length + k;
      expect(Math.abs(res.grid.values[rr * NX + c] - ref['pred-Inf'][t])).toBeLessThan(1e-5 * Math.abs(ref['pred-Inf'][t])); // Float32 grid
      expect(Math.abs(res.sd!.values[rr * NX + c] ** 2 - ref['var-Inf'][t])).toBeLessThan(1e-5 * SILL);
    });
    const cv = res.crossValidation!.residuals;
    expect(ref.cv).toHaveLength(n);
    cv.forEach((c, i) => expect(Math.abs(c.residual - ref.cv[i])).toBeLessThan(1e-8));
  });

  it('simulation conditioned by kriging with the external drift: mean and variance at targets → gstat (4 standard errors)', () => {
    const R = 3000;
    const sim = simulateAtPoints(
      pts,
      { realizations: R, seed: 9, variogram: MODEL, transform: 'none', trend: 'external', externalDrift: driftGrid, neighbors: 'all', crossValidation: false },
      targets,
    );
    expect(sim.sampler.method).toContain('external drift');
    for (let t = 0; t < targets.ids.length; t++) {
      let s = 0,
        ss = 0;
      for (let k = 0; k < R; k++) s += sim.values[k * 4 + t];
      const mean = s / R;
      for (let k = 0; k < R; k++) ss += (sim.values[k * 4 + t] - mean) ** 2;
      const v = ss / (R - 1);
      expect(Math.abs(mean - ref['pred-Inf'][t])).toBeLessThan(4 * Math.sqrt(ref['var-Inf'][t] / R));
      expect(Math.abs(v - ref['var-Inf'][t])).toBeLessThan(4 * ref['var-Inf'][t] * Math.sqrt(2 / (R - 1)));
    }
  });
});

describe('external drift: choice and coverage', () => {
  it('auto compares the external drift with the polynomial ones by leave-one-out RMSE', () => {
    const p = prepareInterpolation(pts, { method: 'kriging', neighbors: 'all', variogram: MODEL, trend: 'auto', externalDrift: driftGrid }, false);
    const kinds = p.variogram!.trend!.candidates!.map((c) => c.kind);
    expect(kinds).toEqual(['none', 'linear', 'quadratic', 'external']);
    const rmses = p.variogram!.trend!.candidates!.map((c) => c.cvRmse!);
    expect(p.crossValidation!.rmse).toBe(Math.min(...rmses));
  });

  it("a point or a target outside the drift grid is an error naming it and the grid's extent", () => {
    const out: PointData = { ...pts, ids: [...pts.ids, 'far'], lon: [...lon, -129.5], lat: [...lat, -40.6], values: [...values, 60] };
    expect(() => prepareInterpolation(out, { method: 'kriging', variogram: MODEL, trend: 'external', externalDrift: driftGrid }, false)).toThrow(
      /drift grid thickness\.tif does not cover 1 of the 46 points \(first: point far\); it spans W -131\.05, S -41\.25, E -129\.85, N -40\.45 \(EPSG:4326\)/,
    );
    expect(() =>
      predictAtPoints(pts, { method: 'kriging', variogram: MODEL, trend: 'external', externalDrift: driftGrid }, { ids: ['x'], lon: [-129.0], lat: [-40.6] }),
    ).toThrow(/does not cover 1 of the 1 targets \(first: target x\)/);
    expect(() => prepareInterpolation(pts, { method: 'kriging', variogram: MODEL, trend: 'external' }, false)).toThrow(/needs its covariate grid/);
  });
});

describe('external drift: extrapolation beyond the covariate range at the data', () => {
  // A covariate growing 10 m per column (s = 10·c at column c), 30 × 10 cells; the eight sites sit on cell centres
  // of columns 10 to 20, so the data's covariate range is 100 to 200 m exactly.
  const grid = bilinearCovariate({ west: WEST, north: NORTH, d: D, nx: 30, ny: 10 }, (c) => 10 * c, 'depth.tif', 'm').grid;
  const at = (c: number) => WEST + (c + 0.5) * D;
  const cols = [10, 12, 13, 15, 16, 18, 19, 20];
  const rows = [1, 7, 4, 2, 8, 5, 3, 6];
  const site: PointData = {
    ids: cols.map((_, i) => `e${i}`),
    lon: cols.map(at),
    lat: rows.map((rr) => NORTH - (rr + 0.5) * D),
    values: cols.map((c, i) => 30 + c + Math.sin(i)),
  };
  const opts = { method: 'kriging' as const, neighbors: 'all' as const, variogram: MODEL, trend: 'external' as const, externalDrift: grid };
  const bbox: [number, number, number, number] = [WEST, NORTH - 10 * D, WEST + 30 * D, NORTH];
  const RANGE = /outside its range at the data sites, 100 to 200 m/;

  it('counts the output cells and targets whose covariate lies outside the range at the sites', () => {
    // Columns 0–9 (below 100 m) and 21–29 (above 200 m): 19 of 30 columns × 10 rows = 190 of 300 cells.
    const g = interpolateGrid(site, { ...opts, grid: { bbox, size: [30, 10] } });
    const wg = g.warnings.filter((w) => w.includes('extrapolated'));
    expect(wg).toHaveLength(1);
    expect(wg[0]).toMatch(/at 190 of the 300 cells of the output grid: their depth\.tif value/);
    expect(wg[0]).toMatch(RANGE);
    // Targets at columns 5 (50 m), 15 (150 m), 25 (250 m) and 20 (200 m, the edge, inside): 2 of 4 outside.
    const t = { ids: ['p', 'q', 'r', 's'], lon: [5, 15, 25, 20].map(at), lat: [NORTH - 0.05, NORTH - 0.05, NORTH - 0.05, NORTH - 0.05] };
    const pr = predictAtPoints(site, opts, t);
    expect(pr.warnings.filter((w) => w.includes('extrapolated'))).toEqual([expect.stringMatching(/at 2 of the 4 targets/)]);
    const sim = simulateAtPoints(site, { ...opts, realizations: 2, seed: 1, transform: 'none', crossValidation: false }, t);
    expect(sim.warnings.filter((w) => w.includes('extrapolated'))).toEqual([expect.stringMatching(/at 2 of the 4 targets/)]);
    const sg = simulateGrid(site, { ...opts, realizations: 2, seed: 1, transform: 'none', crossValidation: false, grid: { bbox, size: [30, 10] } });
    expect(sg.warnings.filter((w) => w.includes('extrapolated'))).toEqual([expect.stringMatching(/at 190 of the 300 cells/)]);
    // All targets inside the range: no warning.
    const inside = predictAtPoints(site, opts, { ids: ['q'], lon: [at(15)], lat: [NORTH - 0.05] });
    expect(inside.warnings.some((w) => w.includes('extrapolated'))).toBe(false);
  });
});

describe('subtherm interpolate / simulate --trend drift:G.tif', () => {
  let dir = '';
  beforeAll(() => {
    dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'ked-cli-'));
    writeFileSync(join(dir, 'thickness.tif'), writeGeoTiff(driftGrid.grid));
    const feat = (id: string, lo: number, la: number, props: Record<string, number>) => ({
      type: 'Feature',
      id,
      properties: props,
      geometry: { type: 'Point', coordinates: [lo, la] },
    });
    writeFileSync(
      join(dir, 'p.geojson'),
      JSON.stringify({ type: 'FeatureCollection', features: pts.ids.map((id, i) => feat(id, lon[i], lat[i], { heatFlowMWm2: values[i] })) }),
    );
    writeFileSync(
      join(dir, 't.geojson'),
      JSON.stringify({ type: 'FeatureCollection', features: targets.ids.map((id, i) => feat(id, targets.lon[i], targets.lat[i], {})) }),
    );
  });
  afterAll(() => {
    if (dir !== '') rmSync(dir, { recursive: true, force: true });
  });
  const run = runCliJson;

  it('the verbs read the GeoTIFF as the covariate and agree with the library; a grid that does not cover exits 2', async () => {
    const drift = `drift:${join(dir, 'thickness.tif')}`;
    const common = ['--points', join(dir, 'p.geojson'), '--at', join(dir, 't.geojson'), '--variogram', 'spherical:1.5,12,35', '--trend', drift];
    const ip = await run(['interpolate', '--method', 'kriging', ...common]);
    expect(ip.code).toBe(0);
    const lib = predictAtPoints(pts, { method: 'kriging', variogram: MODEL, trend: 'external', externalDrift: driftGrid }, targets);
    lib.predictions.forEach((p, t) => expect(ip.json.predictions[t].value).toBeCloseTo(p.value!, 9));
    const sm = await run(['simulate', ...common, '--realizations', '8', '--seed', '2', '--transform', 'none']);
    expect(sm.code).toBe(0);
    expect(sm.json.trend).toBe('external');
    expect(sm.json.realizations).toHaveLength(8);
    const bad = await run([
      'simulate',
      '--points',
      join(dir, 'p.geojson'),
      '--out-dir',
      join(dir, 'o'),
      '--bbox=-131.5,-41.5,-129.5,-40',
      '--cell-km',
      '10',
      '--trend',
      drift,
      '--realizations',
      '2',
      '--seed',
      '1',
    ]);
    expect(bad.code).toBe(2);
    expect(bad.json.error.code).toBe('drift_not_covering');
    expect(bad.json.error.message).toMatch(/cells of the output grid/);
    expect(bad.json.error.details[0].field).toBe('trend');
  });

  it('a drift grid constant over the data gets its own message (exit 2, drift_constant), for drift: and auto:drift:', async () => {
    const flat = { ...driftGrid.grid, values: new Float32Array(NX * NY).fill(250) };
    writeFileSync(join(dir, 'flat.tif'), writeGeoTiff(flat));
    for (const [verb, trend, extra] of [
      ['interpolate', 'drift:', ['--method', 'kriging']],
      ['interpolate', 'auto:drift:', ['--method', 'kriging']],
      ['simulate', 'drift:', ['--realizations', '2', '--seed', '1']],
    ] as const) {
      const bad = await run([
        verb,
        '--points',
        join(dir, 'p.geojson'),
        '--at',
        join(dir, 't.geojson'),
        '--trend',
        `${trend}${join(dir, 'flat.tif')}`,
        ...extra,
      ]);
      expect(bad.code).toBe(2);
      expect(bad.json.error.code).toBe('drift_constant');
      expect(bad.json.error.message).toMatch(/^drift grid is constant over the data: flat\.tif is 250 m at all 45 points/);
      expect(bad.json.error.details[0].field).toBe('trend');
    }
    // The library throws the same error (the API maps its code to a 4xx: server/http-status.ts).
    const lib = () => predictAtPoints(pts, { method: 'kriging', variogram: MODEL, trend: 'external', externalDrift: { ...driftGrid, grid: flat } }, targets);
    expect(lib).toThrow(/drift grid is constant over the data/);
    expect(httpStatusOf('drift_constant')).toBe(400);
  });
});
