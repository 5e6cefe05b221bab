import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import proj4 from 'proj4';
import geodesic from 'geographiclib-geodesic';
import type { Grid } from '../../shared/grid/grid.ts';
import { projectedCellAreasM2 } from '../../shared/geodesy/index.ts';
import { buildOutputGrid } from '../../shared/interp/projection.ts';
import { cellSizeText, groundCellWarning } from '../../shared/geodesy/ground-cell.ts';
import { referenceCellSideRangeKm } from '../helpers/ground-cell.ts';
import { assessHeatInPlace, gridCentresLonLat, parseHeatInPlaceOptions } from '../../shared/resource/index.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';

const WGS84 = '+proj=longlat +datum=WGS84 +no_defs';
// Web Mercator (EPSG:3857) and UTM zone 9 south (EPSG:32709) as proj4 defines them.
const MERC = '+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m +nadgrids=@null +wktext +no_defs';
const UTM9S = '+proj=utm +zone=9 +south +datum=WGS84 +units=m +no_defs';
const G = geodesic.Geodesic.WGS84;

/** Reference: geographiclib area of a projected cell whose edges (straight in the projection) are densified to ≤ 1 km. */
function referenceCellAreaM2(def: string, x0: number, y0: number, x1: number, y1: number, stepUnits: number): number {
  const c = proj4(def, WGS84);
  const p = G.Polygon(false);
  const corners = [
    [x0, y0],
    [x1, y0],
    [x1, y1],
    [x0, y1],
  ];
  for (let e = 0; e < 4; e++) {
    const [ax, ay] = corners[e],
      [bx, by] = corners[(e + 1) % 4];
    const n = Math.max(1, Math.ceil(Math.hypot(bx - ax, by - ay) / stepUnits));
    for (let i = 0; i < n; i++) {
      const [lon, lat] = c.forward([ax + ((bx - ax) * i) / n, ay + ((by - ay) * i) / n]);
      p.AddPoint(lat, lon);
    }
  }
  return Math.abs(p.Compute(false, true).area as number);
}

describe('ground cell areas on projected grids', () => {
  for (const [name, def] of [
    ['Web Mercator', MERC],
    ['UTM 9S', UTM9S],
  ] as const) {
    it(`matches geographiclib areas of the same cells (edges densified to ≤ 1 km) to 1e-6: ${name}`, () => {
      const c = proj4(WGS84, def);
      const [x, y] = c.forward([-128.3, -37.8]);
      const side = def === MERC ? 2500 : 2000; // a few km on the ground
      const grid = { width: 3, height: 2, west: x, north: y, dx: side, dy: side };
      const conv = proj4(def, WGS84);
      const inv = (a: number, b: number) => conv.forward<[number, number]>([a, b]);
      const areas = projectedCellAreasM2(grid, inv);
      for (let r = 0; r < 2; r++)
        for (let k = 0; k < 3; k++) {
          const x0 = x + k * side,
            y1 = y - r * side;
          const ref = referenceCellAreaM2(def, x0, y1 - side, x0 + side, y1, 100);
          expect(Math.abs(areas[r * 3 + k] - ref) / ref).toBeLessThan(1e-6);
        }
    });
  }

  it('makes --cell-km a ground size at the grid centre (Web Mercator at 38° S is 1/cos φ too large in the plane)', () => {
    const g = buildOutputGrid([], [], { bbox: [-128.8, -38.2, -127.6, -37.4], cellKm: 2, crs: 'EPSG:3857', crsDef: MERC });
    const inv = proj4(MERC, WGS84);
    const cx = g.west + (g.width / 2) * g.dx,
      cy = g.north - (g.height / 2) * g.dy;
    const [l0, p0] = inv.forward([cx - g.dx / 2, cy]),
      [l1, p1] = inv.forward([cx + g.dx / 2, cy]);
    const s = G.Inverse(p0, l0, p1, l1).s12 as number; // geographiclib geodesic length, m
    expect(Math.abs(s / 1000 - 2)).toBeLessThan(2e-3);
    expect(g.groundCellKmRange[0]).toBeLessThan(2);
    expect(g.groundCellKmRange[1]).toBeGreaterThan(2);
  });
});

describe('the ground cell size over a grid, printed with its range where it varies', () => {
  const cases = [
    // Web Mercator over 30–46° S: the scale 1/cos φ spreads the cells by about 30 %.
    { name: 'Web Mercator, 30–46° S', bbox: [-130, -46, -126, -30], crs: 'EPSG:3857', def: MERC, cellKm: 10, varies: true },
    // UTM zone 9 south within 1.4° of its central meridian: k within 0.9996–1.0000, under 1 % (Snyder 1987 §8).
    { name: 'UTM 9S near its central meridian', bbox: [-128.8, -38.2, -127.6, -37.4], crs: 'EPSG:32709', def: UTM9S, cellKm: 2, varies: false },
    // Longitude/latitude over 20–40° S: a cell's east–west side is N·cos φ·Δλ, about 25 % narrower at 40° than at 20°.
    { name: 'lon/lat, 20–40° S', bbox: [-130, -40, -125, -20], crs: 'EPSG:4326', def: WGS84, cellKm: 10, varies: true },
    // Longitude/latitude over 0.4° near the equator: under 1 %.
    { name: 'lon/lat, 0.4° at the equator', bbox: [10, -0.2, 10.4, 0.2], crs: 'EPSG:4326', def: WGS84, cellKm: 2, varies: false },
    // Longitude/latitude over 1.6° at 38° S (tan φ·Δφ ≈ 2.2 %): printed with its range, not warned about (< 10 %).
    { name: 'lon/lat, 1.6° at 38° S', bbox: [-129, -38.8, -127, -37.2], crs: 'EPSG:4326', def: WGS84, cellKm: 1, varies: true, quiet: true },
  ] as const;
  for (const t of cases) {
    const warns = t.varies && !('quiet' in t);
    it(`${t.name}: the range matches geographiclib to 1e-4; range printed: ${t.varies}, warning: ${warns}`, () => {
      const g = buildOutputGrid([], [], { bbox: [...t.bbox], cellKm: t.cellKm, crs: t.crs, crsDef: t.def === WGS84 ? undefined : t.def });
      const [lo, hi] = referenceCellSideRangeKm(g, t.def === WGS84 ? null : t.def);
      expect(Math.abs(g.groundCellKmRange[0] - lo) / lo).toBeLessThan(1e-4);
      expect(Math.abs(g.groundCellKmRange[1] - hi) / hi).toBeLessThan(1e-4);
      expect((hi - lo) / t.cellKm > 0.01).toBe(t.varies);
      const w = groundCellWarning(g.cellKm, g.groundCellKmRange, t.crs);
      const text = cellSizeText(g.cellKm, g.groundCellKmRange);
      if (warns) expect(w).toContain(`${lo.toFixed(3)}–${hi.toFixed(3)} km`);
      else expect(w).toBeNull();
      if (t.varies) {
        expect(text).toBe(`${t.cellKm.toFixed(3)} km at the centre, ${lo.toFixed(3)}–${hi.toFixed(3)} km over the grid`);
      } else {
        expect(text).toBe(`${t.cellKm.toFixed(3)} km`);
      }
    });
  }
});

describe('heat in place on the same region in three CRSs (1 km cells)', () => {
  const model = parseThermalModel(JSON.parse(readFileSync(new URL('../../fixtures/demo/model.json', import.meta.url), 'utf8')));
  const POLY = {
    type: 'Polygon' as const,
    coordinates: [
      [
        [-128.8, -37.4],
        [-128.0, -37.4],
        [-127.6, -38.2],
        [-128.8, -38.2],
        [-128.8, -37.4],
      ],
    ],
  };
  const q = (lon: number, lat: number) => 70 + 8 * Math.sin((lon + 128) * 3) + 5 * Math.cos((lat + 38) * 4);
  const bbox: [number, number, number, number] = [-128.9, -38.3, -127.5, -37.3];
  const run = (crs: string, def: string) => {
    const spec = buildOutputGrid([], [], { bbox, cellKm: 1, crs, crsDef: def });
    const lonLat = crs === 'EPSG:4326';
    const conv = proj4(def, WGS84);
    const inv = (x: number, y: number) => conv.forward<[number, number]>([x, y]);
    const centres = lonLat ? null : gridCentresLonLat(spec, inv);
    const values = new Float32Array(spec.width * spec.height);
    for (let r = 0; r < spec.height; r++)
      for (let c = 0; c < spec.width; c++) {
        const i = r * spec.width + c;
        values[i] = lonLat ? q(spec.west + (c + 0.5) * spec.dx, spec.north - (r + 0.5) * spec.dy) : q(centres!.lon[i], centres!.lat[i]);
      }
    const heatFlow: Grid<Float32Array> = { ...spec, values, units: 'mW/m²' };
    const res = assessHeatInPlace({
      heatFlow,
      model,
      polygon: POLY,
      options: parseHeatInPlaceOptions({}),
      ...(lonLat ? {} : { centresLonLat: centres!, toLonLat: inv }),
    });
    return { ej: res.report.totals.polygon!.heatInPlaceEJ.nominal!, areaKm2: res.report.totals.polygon!.areaKm2, warnings: res.report.warnings };
  };
  it('agrees to 0.5 % (and no scale-distortion warning where the areas are ground areas)', () => {
    const a = run('EPSG:4326', WGS84),
      b = run('EPSG:32709', UTM9S),
      c = run('EPSG:3857', MERC);
    // The polygon's own geodesic area (geographiclib) is the common reference for the areas.
    const p = G.Polygon(false);
    for (const [lon, lat] of POLY.coordinates[0].slice(0, -1)) p.AddPoint(lat, lon);
    const polyKm2 = Math.abs(p.Compute(false, true).area as number) / 1e6;
    for (const r of [a, b, c]) {
      expect(Math.abs(r.areaKm2 - polyKm2) / polyKm2).toBeLessThan(0.005);
      expect(Math.abs(r.ej - a.ej) / a.ej).toBeLessThan(0.005);
      expect(r.warnings.some((w: string) => w.includes('not ground areas'))).toBe(false);
    }
  });
});
