import { describe, it, expect } from 'vitest';
import proj4 from 'proj4';
import { loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { InputError } from '../../shared/errors.ts';

// Projected (or geographic) coordinates → WGS84 lon/lat through the offline EPSG definitions, checked against GDAL
// 3.6.2 / PROJ 9.1.1 (Debian gdal-bin), e.g. `echo "143000 471000" | gdaltransform -s_srs EPSG:28992 -t_srs
// EPSG:4326 -output_xy` (with OGR_CT_FORCE_TRADITIONAL_GIS_ORDER=YES: easting/longitude first). Tolerances follow
// the formats contract: 1e-9° where the CRS is on WGS84 or GRS80 (no datum shift), 5 m across a datum shift (PROJ
// may choose a different published transformation of the same datum).

interface Case {
  crs: string;
  xy: [number, number];
  /** gdaltransform's answer, [lon, lat] degrees. */
  gdal: [number, number];
  /** What the datum shift exercises. */
  why: string;
}

const SAME_DATUM: Case[] = [
  { crs: 'EPSG:32633', xy: [500000, 4650000], gdal: [15, 42.002015468347], why: 'UTM on WGS84' },
  { crs: 'EPSG:32709', xy: [500000, 5572000], gdal: [-129, -40.002187410913], why: 'UTM south on WGS84' },
  { crs: 'EPSG:2193', xy: [1558000, 5493000], gdal: [172.50275632663, -40.7128467471968], why: 'transverse Mercator on GRS80' },
  { crs: 'EPSG:25832', xy: [500000, 6823000], gdal: [9, 61.5405618169671], why: 'UTM on GRS80 (ETRS89)' },
  { crs: 'EPSG:2154', xy: [489000, 6588000], gdal: [0.255201988703764, 46.3589192742146], why: 'Lambert conformal conic on GRS80' },
];

const OTHER_DATUM: Case[] = [
  { crs: 'EPSG:28992', xy: [143000, 471000], gdal: [5.2115701559348, 52.2269449130411], why: 'coordinate-frame Helmert in microradians' },
  { crs: 'EPSG:4289', xy: [5.21, 52.23], gdal: [5.20959106873283, 52.2290033586292], why: 'the same datum, geographic' },
  { crs: 'EPSG:3019', xy: [1536000, 6488000], gdal: [11.9234826023244, 58.5133715647998], why: 'coordinate-frame Helmert in arc-seconds' },
  { crs: 'EPSG:2169', xy: [77000, 98000], gdal: [6.12644192737274, 49.8164116671621], why: 'Molodensky-Badekas with a pivot point' },
  { crs: 'EPSG:3058', xy: [49000, 80000], gdal: [-8.52302113073441, 70.9919147992363], why: 'position-vector Helmert in microradians' },
  { crs: 'EPSG:2056', xy: [2660000, 1185000], gdal: [8.22479998651686, 46.8134542697945], why: 'three-parameter shift' },
  { crs: 'EPSG:5514', xy: [-544000, -1144000], gdal: [17.3250624964142, 49.3950210692217], why: 'Krovak, position-vector Helmert' },
];

/** Ground distance (m) between two nearby lon/lat points, on a 6371 km sphere (enough for a 5 m tolerance). */
function groundM(a: [number, number], b: [number, number]): number {
  const r = Math.PI / 180;
  return 6371000 * Math.hypot((a[0] - b[0]) * r * Math.cos(a[1] * r), (a[1] - b[1]) * r);
}

async function toLonLat(c: Case): Promise<[number, number]> {
  return proj4(await loadCrsDefinition(c.crs), WGS84_DEF).forward<[number, number]>(c.xy);
}

describe('offline EPSG definitions agree with GDAL/PROJ', () => {
  it.each(SAME_DATUM)('$crs ($why) within 1e-9°', async (c) => {
    const [lon, lat] = await toLonLat(c);
    expect(Math.abs(lon - c.gdal[0])).toBeLessThan(1e-9);
    expect(Math.abs(lat - c.gdal[1])).toBeLessThan(1e-9);
  });

  it.each(OTHER_DATUM)('$crs ($why) within 5 m', async (c) => {
    expect(groundM(await toLonLat(c), c.gdal)).toBeLessThan(5);
  });

  it('restates EPSG:28992 datum shift in proj4 convention: rotations in arc-seconds, signs of position vector', async () => {
    // EPSG transformation 4833 (coordinate frame, µrad): rx = 1.9342 µrad = 0.398957″ → position vector −0.398957″.
    const def = await loadCrsDefinition('EPSG:28992');
    const p = /\+towgs84=([^\s]+)/.exec(def)?.[1].split(',').map(Number) ?? [];
    expect(p[3]).toBeCloseTo(-0.398957388, 8);
    expect(p[5]).toBeCloseTo(-1.87740164, 7);
  });
});

describe('CRSs that need a datum grid file are refused by name', () => {
  it.each([
    ['EPSG:27700', 'OSTN15_NTv2_OSGBtoETRS.gsb'],
    ['EPSG:31467', 'BETA2007.gsb'],
    ['EPSG:20350', 'National 84 (02.07.01).gsb'],
    ['+proj=longlat +ellps=clrk66 +nadgrids=conus +no_defs', 'conus'],
  ])('%s', async (crs, grid) => {
    const err = await loadCrsDefinition(crs).then(
      () => undefined,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).code).toBe('crs_needs_datum_grid');
    expect((err as InputError).message).toContain(crs);
    expect((err as InputError).message).toContain(grid);
    expect((err as InputError).details[0].field).toBe('crs');
  });

  it('accepts optional and null grids (EPSG:3857 carries +nadgrids=@null)', async () => {
    const def = await loadCrsDefinition('EPSG:3857');
    // gdaltransform -s_srs EPSG:3857 -t_srs EPSG:4326: (0, 0) → (0, 0); 20037508.342789244 m → 180°.
    expect(proj4(def, WGS84_DEF).forward([20037508.342789244, 0])[0]).toBeCloseTo(180, 9);
  });
});
