import { describe, expect, it } from 'vitest';
import geodesic from 'geographiclib-geodesic';
import area from '@turf/area';
import { booleanPointInPolygon } from '@turf/boolean-point-in-polygon';
import { geodesicPolygonAreaM2, gridRowAreasM2, lonLatCellAreaM2 } from '../../shared/geodesy/index.ts';
import { lonLatGridCentres, lonLatGridPolygonMask, pointsPolygonMask } from '../../shared/resource/index.ts';
import { createStream } from '../../shared/random/index.ts';

const WGS84 = geodesic.Geodesic.WGS84;

/** Area of a lat/lon cell by geographiclib's geodesic polygon with each parallel densified (n points an edge), m². */
function geographiclibCellArea(s: number, n: number, w: number, e: number, pts = 2000): number {
  const p = WGS84.Polygon(false);
  for (let i = 0; i <= pts; i++) p.AddPoint(s, w + ((e - w) * i) / pts);
  for (let i = 0; i <= pts; i++) p.AddPoint(n, e - ((e - w) * i) / pts);
  return Math.abs(p.Compute(false, true).area ?? NaN);
}

describe('ellipsoidal cell area (authalic formula, Snyder 1987 eq. 3-12)', () => {
  it('matches geographiclib-geodesic polygon areas of densified cells to 1e-7', () => {
    // Reference: geographiclib-geodesic (Karney 2013) PolygonArea; parallels densified so geodesic chords follow them
    // (the chord/parallel gap shrinks as 1/n², about 1e-9 of the area here).
    for (const [s, n, dl] of [
      [-38.5, -37.5, 1],
      [0, 0.5, 0.5],
      [60, 61, 2],
      [-89, -85, 10],
      [-38.01, -38, 0.01],
    ]) {
      const ours = lonLatCellAreaM2(s, n, dl);
      const ref = geographiclibCellArea(s, n, 10, 10 + dl);
      expect(Math.abs(ours - ref) / ref).toBeLessThan(1e-7);
    }
  });

  it('gives the WGS84 surface area for the whole ellipsoid', () => {
    // 4π·R_q² with the authalic radius R_q = 6371007.1810 m (Moritz 1980, "Geodetic Reference System 1980", for
    // GRS80, which WGS84 matches to 0.1 mm; from memory): 5.10065622e14 m².
    expect(lonLatCellAreaM2(-90, 90, 360)).toBeCloseTo(4 * Math.PI * 6371007.181 ** 2, -6);
  });

  it('differs from the spherical @turf/area by up to about 1 % (which is why it is not used)', () => {
    const cell = (s: number) => ({
      type: 'Polygon' as const,
      coordinates: [
        [
          [0, s],
          [0.1, s],
          [0.1, s + 0.1],
          [0, s + 0.1],
          [0, s],
        ],
      ],
    });
    const rel = (s: number) => area(cell(s)) / lonLatCellAreaM2(s, s + 0.1, 0.1) - 1;
    // From the radii of curvature: the sphere (R = 6371008.8 m) is about +0.45 % at the equator, −0.9 % near a pole.
    expect(rel(0)).toBeGreaterThan(0.003);
    expect(rel(0)).toBeLessThan(0.006);
    expect(rel(80)).toBeLessThan(-0.006);
    expect(rel(80)).toBeGreaterThan(-0.01);
  });

  it('gives per-row areas for lon/lat grids and dx·dy for projected ones', () => {
    const g = { height: 3, north: -37, dx: 0.1, dy: 0.2, crs: 'EPSG:4326' };
    const r = gridRowAreasM2(g);
    expect(r.method).toBe('ellipsoidal');
    expect(r.rowAreaM2[2]).toBeCloseTo(lonLatCellAreaM2(-37.6, -37.4, 0.1), 6);
    const p = gridRowAreasM2({ height: 2, north: 5e6, dx: 1000, dy: 500, crs: 'EPSG:32760' });
    expect(p.method).toBe('planar');
    expect([...p.rowAreaM2]).toEqual([5e5, 5e5]);
  });
});

describe('polygon area (geographiclib-geodesic)', () => {
  it('subtracts holes and adds the parts of a MultiPolygon', () => {
    const outer = [
      [-128.5, -38.5],
      [-127.5, -38.5],
      [-127.5, -37.5],
      [-128.5, -37.5],
      [-128.5, -38.5],
    ];
    const hole = [
      [-128.2, -38.2],
      [-128.2, -37.8],
      [-127.8, -37.8],
      [-127.8, -38.2],
      [-128.2, -38.2],
    ];
    const a = geodesicPolygonAreaM2({ type: 'Polygon', coordinates: [outer] });
    const h = geodesicPolygonAreaM2({ type: 'Polygon', coordinates: [hole] });
    expect(geodesicPolygonAreaM2({ type: 'Polygon', coordinates: [outer, hole] })).toBeCloseTo(a - h, 0);
    expect(geodesicPolygonAreaM2({ type: 'MultiPolygon', coordinates: [[outer], [hole]] })).toBeCloseTo(a + h, 0);
    // A 1° × 1° box near 38° S is about 9,770 km² (geographiclib with geodesic edges; the band formula gives the same to 0.1 %).
    expect(Math.abs(a / lonLatCellAreaM2(-38.5, -37.5, 1) - 1)).toBeLessThan(1e-3);
  });
});

describe('polygon membership (cell centre inside)', () => {
  // Reference: @turf/boolean-point-in-polygon on every cell centre.
  const grid = { width: 47, height: 39, west: -129, north: -37, dx: 0.05, dy: 0.04, crs: 'EPSG:4326' };
  const rng = createStream(7, 0);
  const star: number[][] = [];
  for (let i = 0; i < 14; i++) {
    const a = (2 * Math.PI * i) / 14,
      r = i % 2 ? 0.5 : 1.0 + 0.2 * rng.uniform();
    star.push([-127.85 + 0.9 * r * Math.cos(a), -37.8 + 0.7 * r * Math.sin(a)]);
  }
  star.push(star[0]);
  const hole = [
    [-127.9, -37.85],
    [-127.8, -37.85],
    [-127.8, -37.75],
    [-127.9, -37.75],
    [-127.9, -37.85],
  ];
  const geom = { type: 'Polygon' as const, coordinates: [star, hole] };

  it('scanline and point tests agree with turf for a star with a hole', () => {
    const scan = lonLatGridPolygonMask(grid, [geom.coordinates]);
    const { lon, lat } = lonLatGridCentres(grid);
    const pts = pointsPolygonMask(lon, lat, [geom.coordinates]);
    let inside = 0;
    for (let c = 0; c < lon.length; c++) {
      const ref = booleanPointInPolygon([lon[c], lat[c]], geom) ? 1 : 0;
      expect(scan[c]).toBe(ref);
      expect(pts[c]).toBe(ref);
      inside += ref;
    }
    expect(inside).toBeGreaterThan(100);
    expect(inside).toBeLessThan(lon.length);
  });
});
