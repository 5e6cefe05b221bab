import { describe, expect, it } from 'vitest';
import { check } from '@placemarkio/check-geojson';
import proj4 from 'proj4';
import type { Grid } from '../../shared/grid/grid.ts';
import { contourGrid, contourLevels, isolinesIndex, niceContourInterval } from '../../shared/grid/contours.ts';
import { geojsonText } from '../../server/io/export.ts';
import { buildProvenance } from '../../shared/products/provenance.ts';
import { CAUTION } from '../../shared/caution.ts';
import { sha256Hex } from '../../server/io/export.ts';
import { loadCrsDefinition } from '../../shared/interp/projection.ts';

// Analytic fields, true isolines known in closed form: a plane (straight lines) and a cone (circles). Marching
// squares with linear interpolation along cell edges (d3-contour) is exact for a plane up to round-off and within a
// small fraction of a cell for a cone; the test asks for half a cell, the bound the products promise.

function fieldGrid(
  width: number,
  height: number,
  spec: { west: number; north: number; dx: number; dy: number; crs: string },
  f: (x: number, y: number) => number,
): Grid<Float32Array> {
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = f(spec.west + (c + 0.5) * spec.dx, spec.north - (r + 0.5) * spec.dy);
  return { width, height, values, ...spec, units: 'km' };
}

const SPEC = { west: -128.6, north: -37.4, dx: 0.01, dy: 0.008, crs: 'EPSG:4326' };
const provenance = buildProvenance({ method: 'test', model: null, inputs: {}, parameters: {} }, sha256Hex);

describe('contours of analytic fields', () => {
  it('a plane: every vertex within half a cell of the true straight isoline (in fact within round-off)', () => {
    // v = 3 + 40·(x − west) + 25·(north − y) in degrees; isoline v = L is a straight line.
    const f = (x: number, y: number) => 3.0137 + 40 * (x - SPEC.west) + 25 * (SPEC.north - y);
    const g = fieldGrid(60, 50, SPEC, f);
    const fc = contourGrid(g, { interval: 1, units: 'km' });
    const levels = contourLevels(g.values, 1);
    expect(levels.length).toBeGreaterThan(20);
    expect(new Set(fc.features.map((x) => x.properties.value)).size).toBe(levels.length);
    const grad = Math.hypot(40, 25);
    let worst = 0;
    for (const feat of fc.features) {
      expect(feat.properties.units).toBe('km');
      for (const [x, y] of feat.geometry.coordinates) worst = Math.max(worst, Math.abs(f(x, y) - feat.properties.value) / grad);
      // One open line per level: the border pieces of the ≥ level region are cut.
      const c = feat.geometry.coordinates;
      expect(c[0][0] !== c[c.length - 1][0] || c[0][1] !== c[c.length - 1][1]).toBe(true);
    }
    expect(worst).toBeLessThan(0.5 * Math.min(SPEC.dx, SPEC.dy));
    expect(worst).toBeLessThan(1e-5); // float32 values and 7-decimal coordinates
    expect(fc.features.length).toBe(levels.length);
  });

  it('a cone: closed circles within half a cell of the true radius', () => {
    // v = 20 − ρ, ρ the distance from the centre in cell units; isoline v = L is the circle ρ = 20 − L.
    const w = 61,
      h = 61,
      c0 = 30.5,
      r0 = 30.5;
    const values = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) values[r * w + c] = 20 - Math.hypot(c + 0.5 - c0, r + 0.5 - r0);
    let worst = 0,
      lines = 0;
    for (const L of [2.5, 7.25, 13, 18.5]) {
      const ls = isolinesIndex(values, w, h, L);
      expect(ls).toHaveLength(1);
      const line = ls[0];
      expect(line[0]).toEqual(line[line.length - 1]);
      for (const [x, y] of line) worst = Math.max(worst, Math.abs(Math.hypot(x - c0, y - r0) - (20 - L)));
      lines++;
    }
    expect(lines).toBe(4);
    expect(worst).toBeLessThan(0.5);
  });

  it('draws no spurious lines along NoData or the grid border', () => {
    const f = (x: number, y: number) => 0.37 + 30 * (x - SPEC.west) + 10 * (SPEC.north - y);
    const g = fieldGrid(40, 30, SPEC, f);
    // A NoData hole and a NoData strip along the east edge.
    for (let r = 8; r < 20; r++) for (let c = 10; c < 22; c++) g.values[r * 40 + c] = NaN;
    for (let r = 0; r < 30; r++) for (let c = 35; c < 40; c++) g.values[r * 40 + c] = NaN;
    const fc = contourGrid(g, { interval: 0.5 });
    expect(fc.features.length).toBeGreaterThan(5);
    const grad = Math.hypot(30, 10);
    for (const feat of fc.features) {
      for (const [x, y] of feat.geometry.coordinates) {
        // A segment traced along a NoData edge or the border would sit off the true isoline.
        expect(Math.abs(f(x, y) - feat.properties.value) / grad).toBeLessThan(1e-5);
        const col = (x - SPEC.west) / SPEC.dx,
          row = (SPEC.north - y) / SPEC.dy;
        expect(col).toBeGreaterThanOrEqual(0.5 - 1e-6); // never beyond the outermost cell centres
        expect(row).toBeGreaterThanOrEqual(0.5 - 1e-6);
        expect(col).toBeLessThanOrEqual(34.5 + 1e-6);
        expect(row).toBeLessThanOrEqual(29.5 + 1e-6);
        expect(col > 9.5 + 1e-6 && col < 21.5 - 1e-6 && row > 7.5 + 1e-6 && row < 19.5 - 1e-6).toBe(false);
      }
    }
  });

  it('maps a projected grid to lon/lat once at the end (proj4 inverse)', async () => {
    // UTM zone 9 south (EPSG:32709, offline definition from epsg-index) over the demo region.
    const def = await loadCrsDefinition('EPSG:32709');
    const spec = { west: 400000, north: 5860000, dx: 1000, dy: 1000, crs: 'EPSG:32709' };
    const f = (x: number, y: number) => 1.234 + (x - spec.west) / 4000 + (spec.north - y) / 9000;
    const g = fieldGrid(50, 40, spec, f);
    const inv = proj4(def, 'WGS84');
    const fc = contourGrid(g, { interval: 1, toLonLat: (x, y) => inv.forward<[number, number]>([x, y]) });
    expect(fc.features.length).toBeGreaterThan(5);
    for (const feat of fc.features) {
      for (const [lon, lat] of feat.geometry.coordinates) {
        expect(lon).toBeGreaterThan(-131);
        expect(lon).toBeLessThan(-126);
        const [x, y] = inv.inverse([lon, lat]);
        // Distance to the true line in metres: |f − L| / |∇f|; well within half a cell (500 m), in fact about 1 cm
        // (7-decimal lon/lat).
        expect(Math.abs(f(x, y) - feat.properties.value) / Math.hypot(1 / 4000, 1 / 9000)).toBeLessThan(0.05);
      }
    }
    expect(() => contourGrid(g, { interval: 1 })).toThrow(/toLonLat/);
  });

  it('writes valid RFC 7946 GeoJSON with caution and provenance (checked by @placemarkio/check-geojson)', () => {
    const g = fieldGrid(30, 20, SPEC, (x, y) => 0.11 + 30 * (x - SPEC.west) + 10 * (SPEC.north - y));
    g.values[45] = NaN;
    const text = geojsonText(contourGrid(g, { interval: 0.5 }), provenance);
    const parsed = check(text) as unknown as { type: string; features: unknown[] };
    expect(parsed.type).toBe('FeatureCollection');
    const j = JSON.parse(text);
    expect(j.caution).toBe(CAUTION);
    expect(j.provenance.tool).toBe('subtherm');
    expect(j.provenance.contentHash).toMatch(/^[0-9a-f]{64}$/);
    expect(j.features.length).toBeGreaterThan(3);
  });

  it('picks nice intervals and refuses absurd level counts', () => {
    expect(niceContourInterval(40, 120)).toBe(10);
    expect(niceContourInterval(0, 1)).toBe(0.1);
    expect(contourLevels(Float32Array.from([0.2, 3.7]), 1)).toEqual([1, 2, 3]);
    expect(() => contourLevels(Float32Array.from([0, 1e6]), 1)).toThrow(/limit/);
  });
});

import { contours as d3contours } from 'd3-contour';
import { isolinesIndexLevels } from '../../shared/grid/contours.ts';

/** Whether (x, y) lies on a side of any of the polylines (within 1e-9 index units). */
function onSomeLine(lines: number[][][], x: number, y: number): boolean {
  return lines.some((line) =>
    line.some((p, i) => {
      if (i === 0) return false;
      const [ax, ay] = line[i - 1],
        [bx, by] = p;
      const dx = bx - ax,
        dy = by - ay,
        l2 = dx * dx + dy * dy;
      const u = l2 > 0 ? Math.max(0, Math.min(1, ((x - ax) * dx + (y - ay) * dy) / l2)) : 0;
      return Math.hypot(ax + u * dx - x, ay + u * dy - y) < 1e-9;
    }),
  );
}

describe('isolines against d3-contour (general-purpose reference)', () => {
  it("every vertex lies on a side of one of d3-contour's rings at the same level, and every ring side inside the data is covered", () => {
    // A bumpy field with saddles, plateaus at exact level values and a NoData hole. Our vertices may differ from
    // d3-contour's only in saddle squares, where the two readings join different corners (skipped below).
    const w = 48,
      h = 40;
    const values = new Float64Array(w * h);
    for (let r = 0; r < h; r++)
      for (let c = 0; c < w; c++) values[r * w + c] = Math.round(4 * (Math.sin(c / 5) * Math.cos(r / 4) + 0.03 * c)) / 4 + 0.1 * Math.sin(c * r);
    for (let r = 15; r < 22; r++) for (let c = 20; c < 27; c++) values[r * w + c] = NaN;
    const levels = [-0.75, -0.25, 0, 0.5, 1];
    const ours = isolinesIndexLevels(values, w, h, levels);
    const gen = d3contours().size([w, h]);
    levels.forEach((L, k) => {
      const rings = gen
        .contour(
          Array.from(values, (v) => (Number.isNaN(v) ? NaN : v)),
          L,
        )
        .coordinates.flat();
      const onRing = (x: number, y: number) => onSomeLine(rings, x, y);
      let vertices = 0;
      for (const line of ours[k])
        for (const [x, y] of line) {
          expect(onRing(x, y), `level ${L} vertex ${x},${y}`).toBe(true);
          vertices++;
        }
      expect(vertices).toBeGreaterThan(10);
      // Coverage: each d3 ring side inside a square with four finite corners is part of one of our lines.
      const onOurs = (x: number, y: number) => onSomeLine(ours[k], x, y);
      let covered = 0;
      for (const ring of rings)
        for (let i = 1; i < ring.length; i++) {
          const mx = (ring[i - 1][0] + ring[i][0]) / 2,
            my = (ring[i - 1][1] + ring[i][1]) / 2;
          const fx = mx - 0.5,
            fy = my - 0.5,
            c = Math.floor(fx),
            r = Math.floor(fy);
          if (fx === c || fy === r || c < 0 || r < 0 || c + 1 >= w || r + 1 >= h) continue; // on a side, or at the border
          const corners = [values[r * w + c], values[r * w + c + 1], values[(r + 1) * w + c + 1], values[(r + 1) * w + c]];
          if (!corners.every(Number.isFinite)) continue;
          // Saddle squares (two opposite corners above): d3-contour joins them by a fixed rule, ours by the square's
          // mean; both are valid marching-squares readings, so those squares are not compared.
          const up = corners.map((v) => v >= L);
          if (up[0] === up[2] && up[1] === up[3] && up[0] !== up[1]) continue;
          expect(onOurs(mx, my), `level ${L} ring side at ${mx},${my}`).toBe(true);
          covered++;
        }
      expect(covered).toBeGreaterThan(10);
    });
  });
});
