import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { prepareInterpolation } from '../../shared/interp/interpolate.ts';
import { blockEstimates, discretisePolygon, type BlockPolygon } from '../../shared/interp/blockKriging.ts';
import { converter, lonLatToLocalKm, WGS84_DEF } from '../../shared/interp/projection.ts';
import type { VariogramModel } from '../../shared/interp/variogram.ts';
import { writeGeoTiff } from '../../server/io/geotiff.ts';
import { runCliJson } from '../helpers/cli.ts';
import { bilinearCovariate, GSTAT_FRAME, sitesInFrame } from '../helpers/drift-fixtures.ts';
import { runRscript } from '../helpers/gstat.ts';

/**
 * Block kriging with an external drift (docs/sources.md#external-drift, docs/sources.md#block-kriging): the block's
 * drift row holds 1 and the covariate's mean over the block's discretisation. Checked against R gstat's krige with
 * formula z ~ s and irregular-block support (Debian r-cran-gstat; Pebesma 2004): `block` = the discretisation points
 * relative to the block's location, newdata = that location with s = the covariate's mean over the same points
 * (gstat's documented way to give a block's covariate). The covariate gstat gets is computed here from the grid's
 * own formula s = 200 − 2·c + 1.5·r + 0.25·c·r at cell (column c, row r), bilinear in the fractional cell position,
 * so the bilinear read of the grid reproduces it exactly and every node value is exact in float32.
 */

const FRAME = GSTAT_FRAME;
const sAt = (c: number, r: number) => 200 - 2 * c + 1.5 * r + 0.25 * c * r;
const { grid: driftGrid, at: covariateOf } = bilinearCovariate(FRAME, sAt, 'basement.tif', 'Ma');

// Invented sites inside the grid: values following the covariate, a smooth field and noise.
const pts = sitesInFrame(FRAME, 4411, 40, 'q', (lo, la, r) => 160 - 0.15 * covariateOf(lo, la) + 5 * Math.cos(lo * 17) * Math.sin(la * 11) + 2 * r());
const { lon, lat, values } = pts;
const n = pts.ids.length;
const blocks: BlockPolygon[] = [
  {
    id: 'B1',
    rings: [
      [
        [-130.9, -40.55],
        [-130.55, -40.6],
        [-130.6, -40.9],
        [-130.85, -40.85],
        [-130.9, -40.55],
      ],
    ],
  },
  {
    id: 'B2',
    rings: [
      [
        [-130.4, -40.8],
        [-130.0, -40.8],
        [-130.0, -41.1],
        [-130.2, -41.15],
        [-130.4, -41.0],
        [-130.4, -40.8],
      ],
    ],
  },
];

for (const MODEL of [
  { model: 'spherical', nugget: 0, partialSill: 14, rangeKm: 40 },
  { model: 'exponential', nugget: 2, partialSill: 10, rangeKm: 25 },
] satisfies VariogramModel[])
  describe(`block kriging with an external drift against R gstat krige(z ~ s, block = …), ${MODEL.model} nugget ${MODEL.nugget}`, () => {
    let dir = '';
    const ref: number[][] = [];
    const prep = prepareInterpolation(pts, { method: 'kriging', variogram: MODEL, trend: 'external', externalDrift: driftGrid, crossValidation: false }, false);
    beforeAll(() => {
      dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'ked-block-'));
      const proj = prep.plan.projection;
      const toLonLat = converter(proj.def, WGS84_DEF);
      const px = new Float64Array(n),
        py = new Float64Array(n);
      lonLatToLocalKm(proj, lon, lat, px, py);
      writeFileSync(join(dir, 'p.csv'), 'x,y,s,z\n' + Array.from(px, (x, i) => `${x},${py[i]},${covariateOf(lon[i], lat[i])},${values[i]}`).join('\n'));
      const script = ['suppressMessages({library(sp); library(gstat)})', `p <- read.csv("${join(dir, 'p.csv')}"); coordinates(p) <- ~x+y`];
      script.push(
        `m <- vgm(${MODEL.partialSill}, "${MODEL.model === 'spherical' ? 'Sph' : 'Exp'}", ${MODEL.model === 'spherical' ? MODEL.rangeKm : MODEL.rangeKm / 3}, ${MODEL.nugget})`,
      );
      blocks.forEach((b, k) => {
        // The same discretisation as the library's (a regular grid inside the polygon in the local km frame).
        const ring = b.rings[0];
        const rx = new Float64Array(ring.length),
          ry = new Float64Array(ring.length);
        lonLatToLocalKm(
          proj,
          ring.map((q) => q[0]),
          ring.map((q) => q[1]),
          rx,
          ry,
        );
        const d = discretisePolygon([Array.from(rx, (x, i) => [x, ry[i]])])!;
        const N = d.x.length;
        const cx = d.x.reduce((a, v) => a + v, 0) / N,
          cy = d.y.reduce((a, v) => a + v, 0) / N;
        let sbar = 0;
        for (let i = 0; i < N; i++) sbar += covariateOf(...toLonLat.forward([d.x[i], d.y[i]])) / N;
        writeFileSync(join(dir, `d${k}.csv`), 'x,y\n' + Array.from(d.x, (x, i) => `${x - cx},${d.y[i] - cy}`).join('\n'));
        script.push(
          `nd <- data.frame(x = ${cx}, y = ${cy}, s = ${sbar}); coordinates(nd) <- ~x+y`,
          `k <- krige(z ~ s, p, nd, model = m, block = read.csv("${join(dir, `d${k}.csv`)}"), debug.level = 0)`,
          'cat(sprintf("%.17g", k$var1.pred), sprintf("%.17g", k$var1.var), "\\n")',
        );
      });
      writeFileSync(join(dir, 'b.R'), script.join('\n'));
      for (const line of runRscript(join(dir, 'b.R')).trim().split('\n')) ref.push(line.trim().split(/\s+/).map(Number));
    }, 300_000);
    afterAll(() => {
      if (dir !== '') rmSync(dir, { recursive: true, force: true });
    });

    // gstat leaves the nugget out of the block-to-block covariance (the continuous block's limit); the discretised
    // C̄(V, V) here keeps C(0) = the full sill on its N diagonal terms, i.e. nugget/N more block variance (see
    // blockKriging.ts), so gstat's variance + nugget/N is what the library gives. gstat's block path agrees with a
    // dense double-precision solve to about 1e-8 of the sill (its point path to 1e-14): the tolerances below.
    it('block means agree to 1e-8 (relative), block-kriging variances to 1e-7 of the sill', () => {
      const got = blockEstimates(prep, blocks, driftGrid);
      expect(ref).toHaveLength(blocks.length);
      got.forEach((g, k) => {
        expect(g.discretisationPoints).toBeGreaterThanOrEqual(16);
        expect(Math.abs(g.value - ref[k][0])).toBeLessThan(1e-8 * Math.abs(ref[k][0]));
        expect(Math.abs(g.sd ** 2 - (ref[k][1] + MODEL.nugget / g.discretisationPoints))).toBeLessThan(1e-7 * (MODEL.nugget + MODEL.partialSill));
      });
    });
  });

describe('subtherm interpolate --block with --trend drift:G.tif', () => {
  let dir = '';
  beforeAll(() => {
    dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'ked-block-cli-'));
    writeFileSync(join(dir, 'basement.tif'), writeGeoTiff(driftGrid.grid));
    const point = (id: string, lo: number, la: number) => ({
      type: 'Feature',
      id,
      properties: { heatFlowMWm2: values[Number(id.slice(1))] },
      geometry: { type: 'Point', coordinates: [lo, la] },
    });
    writeFileSync(join(dir, 'p.geojson'), JSON.stringify({ type: 'FeatureCollection', features: pts.ids.map((id, i) => point(id, lon[i], lat[i])) }));
    const poly = (b: BlockPolygon) => ({ type: 'Feature', id: b.id, properties: {}, geometry: { type: 'Polygon', coordinates: b.rings } });
    writeFileSync(join(dir, 'b.geojson'), JSON.stringify({ type: 'FeatureCollection', features: blocks.map(poly) }));
    const far = {
      id: 'FAR',
      rings: [
        [
          [-130.2, -41.0],
          [-129.7, -41.0],
          [-129.7, -41.2],
          [-130.2, -41.0],
        ],
      ],
    };
    writeFileSync(join(dir, 'far.geojson'), JSON.stringify({ type: 'FeatureCollection', features: [poly(far)] }));
    writeFileSync(join(dir, 't.geojson'), JSON.stringify({ type: 'FeatureCollection', features: [point('q0', -130.5, -40.8)] }));
  });
  afterAll(() => {
    if (dir !== '') rmSync(dir, { recursive: true, force: true });
  });

  it('the verb averages the GeoTIFF over each block like the library; a block the grid does not cover exits 2 naming it', async () => {
    const MODEL: VariogramModel = { model: 'spherical', nugget: 0, partialSill: 14, rangeKm: 40 };
    const common = ['interpolate', '--method', 'kriging', '--points', join(dir, 'p.geojson'), '--variogram', 'spherical:0,14,40'];
    const drift = ['--trend', `drift:${join(dir, 'basement.tif')}`, '--at', join(dir, 't.geojson')];
    const out = await runCliJson([...common, ...drift, '--block', join(dir, 'b.geojson')]);
    expect(out.code).toBe(0);
    const prep = prepareInterpolation(pts, { method: 'kriging', variogram: MODEL, trend: 'external', externalDrift: driftGrid, crossValidation: false }, false);
    const lib = blockEstimates(prep, blocks, driftGrid);
    expect(out.json.blocks.map((b: { id: string }) => b.id)).toEqual(['B1', 'B2']);
    out.json.blocks.forEach((b: { value: number; sd: number }, k: number) => {
      expect(Math.abs(b.value - lib[k].value)).toBeLessThan(1e-9 * Math.abs(lib[k].value));
      expect(Math.abs(b.sd - lib[k].sd)).toBeLessThan(1e-9 * lib[k].sd);
    });
    // The external drift changes the block means: ordinary block kriging of the same data differs.
    const ok = await runCliJson([...common, '--at', join(dir, 't.geojson'), '--block', join(dir, 'b.geojson')]);
    expect(Math.abs(ok.json.blocks[0].value - lib[0].value)).toBeGreaterThan(1e-3);
    const bad = await runCliJson([...common, ...drift, '--block', join(dir, 'far.geojson')]);
    expect(bad.code).toBe(2);
    expect(bad.json.error.code).toBe('drift_not_covering');
    expect(bad.json.error.message).toMatch(
      /does not cover \d+ of the \d+ discretisation points of the blocks \(first: block FAR at lon -1[23]\d\.\d{5}, lat -41\.\d{5}\)/,
    );
  });
});
