// A GeoPackage layer whose CRS row gives only a WKT definition (organization NONE: some GIS programs write that)
// goes through the same checks as one that names its EPSG code: the WKT's own EPSG code (AUTHORITY/ID) selects the
// offline definition, so a CRS that needs a datum grid file is refused (crs_needs_datum_grid) and a usable one lands
// where GDAL puts it. GDAL (ogr2ogr, Debian's gdal-bin) writes the files at test time; the rows are then rewritten.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import Database from 'better-sqlite3';
import { readGeoPackage, toWgs84, wktEpsgCode } from '../../server/io/geopackage.ts';
import { InputError } from '../../shared/errors.ts';
import { requireGdal } from '../helpers/gdal.ts';

let dir = '';
beforeAll(() => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'formats-gpkg-crs-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Invented sites (open ocean) written by ogr2ogr in `crs`, with the layer's CRS row turned into a bare WKT one. */
function wktOnlyGeoPackage(name: string, crs: string, points: [number, number][]): Uint8Array {
  const src = join(dir, `${name}.geojson`);
  writeFileSync(
    src,
    JSON.stringify({
      type: 'FeatureCollection',
      features: points.map((p, i) => ({ type: 'Feature', geometry: { type: 'Point', coordinates: p }, properties: { id: `S${i}`, heatFlowMWm2: 60 + i } })),
    }),
  );
  const f = join(dir, `${name}.gpkg`);
  const r = spawnSync('ogr2ogr', ['-f', 'GPKG', '-t_srs', crs, f, src, '-nln', 'sites'], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(r.stderr);
  const db = new Database(f);
  const srsId = (db.prepare("SELECT srs_id AS id FROM gpkg_geometry_columns WHERE table_name = 'sites'").get() as { id: number }).id;
  db.prepare("UPDATE gpkg_spatial_ref_sys SET organization = 'NONE' WHERE srs_id = ?").run(srsId);
  db.close();
  return readFileSync(f);
}

describe('GeoPackage layers whose CRS comes as WKT', () => {
  it('reads the EPSG code a WKT names for itself (WKT 1 AUTHORITY and WKT 2 ID), and none when it names none', () => {
    expect(wktEpsgCode('PROJCS["x",GEOGCS["y",AUTHORITY["EPSG","4326"]],UNIT["metre",1],AUTHORITY["EPSG","32709"]]')).toBe(32709);
    expect(wktEpsgCode('PROJCRS["x",BASEGEOGCRS["y",ID["EPSG",4326]],ID["EPSG",27700]]')).toBe(27700);
    expect(wktEpsgCode('PROJCS["x",GEOGCS["y",AUTHORITY["EPSG","4326"]],UNIT["metre",1]]')).toBeNull();
  });

  it('a WKT naming EPSG:27700 (its datum shift needs the OSTN15 grid file) → crs_needs_datum_grid naming file and layer', async () => {
    requireGdal('ogr2ogr');
    const bytes = wktOnlyGeoPackage('osgb', 'EPSG:27700', [
      [-1.5, 52.5],
      [-1.4, 52.6],
    ]);
    const err = await readGeoPackage(bytes, { source: 'osgb.gpkg' }).then(
      () => null,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).code).toBe('crs_needs_datum_grid');
    expect((err as InputError).message).toContain('osgb.gpkg, layer "sites"');
    expect((err as InputError).message).toContain('OSTN15');
  });

  it('a WKT naming EPSG:32709 (WGS 84 / UTM 9S) lands on the original longitude/latitude within 1e-9°', async () => {
    requireGdal('ogr2ogr');
    const pts: [number, number][] = [
      [-128.444454123, -38.095812987],
      [-127.90000001, -37.5],
    ];
    const r = await readGeoPackage(wktOnlyGeoPackage('utm', 'EPSG:32709', pts), { source: 'utm.gpkg' });
    expect(r.sourceCrs).toBe('EPSG:32709');
    const got = r.collection.features.map((f) => (f.geometry as { coordinates: number[] }).coordinates);
    for (let i = 0; i < pts.length; i++) {
      expect(Math.abs(got[i][0] - pts[i][0])).toBeLessThan(1e-9);
      expect(Math.abs(got[i][1] - pts[i][1])).toBeLessThan(1e-9);
    }
  });

  it('a WKT without a code whose PROJ4_GRIDS extension asks for a grid file is refused the same way', async () => {
    const wkt =
      'PROJCS["NAD27 / UTM zone 17N",GEOGCS["NAD27",DATUM["North_American_Datum_1927",SPHEROID["Clarke 1866",6378206.4,294.978698213898],EXTENSION["PROJ4_GRIDS","NTv2_0.gsb"]],PRIMEM["Greenwich",0],UNIT["degree",0.0174532925199433]],PROJECTION["Transverse_Mercator"],PARAMETER["latitude_of_origin",0],PARAMETER["central_meridian",-81],PARAMETER["scale_factor",0.9996],PARAMETER["false_easting",500000],PARAMETER["false_northing",0],UNIT["metre",1]]';
    const err = await toWgs84({ wkt }).then(
      () => null,
      (e: unknown) => e,
    );
    expect((err as InputError).code).toBe('crs_needs_datum_grid');
    expect((err as InputError).message).toContain('NTv2_0.gsb');
  });
});
