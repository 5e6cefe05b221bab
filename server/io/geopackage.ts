/**
 * GeoPackage (OGC 12-128r18, GeoPackage Encoding Standard 1.3) in, through better-sqlite3; writing is in
 * geopackage-write.ts and the binary geometries in gpkg-geometry.ts (both re-exported here).
 *
 * In: the point, line and polygon layers of any GeoPackage; a layer is chosen by name when there are several; its
 * coordinates are reprojected to WGS 84 longitude/latitude from the EPSG code in gpkg_spatial_ref_sys (definitions
 * offline from epsg-index) or, failing that, from its WKT definition (proj4).
 */
import Database from 'better-sqlite3';
import proj4 from 'proj4';
import { InputError } from '../../shared/errors.ts';
import { loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import { refuseGridShift } from '../../shared/interp/crs-datum.ts';
import { geometryFromGpkg, type GeoJsonCollection, type GeoJsonFeature, type GeoJsonGeometry, type Position } from './gpkg-geometry.ts';
import { quote } from './geopackage-write.ts';

export { gpkgGeometry, geometryFromGpkg, type GeoJsonCollection, type GeoJsonFeature, type GeoJsonGeometry } from './gpkg-geometry.ts';
export { writeGeoPackage, tableName, type GeoPackageLayer } from './geopackage-write.ts';

export interface VectorLayerInfo {
  name: string;
  geometryType: string;
  srsId: number;
  features: number;
}

export interface VectorRead {
  collection: GeoJsonCollection;
  layer: string;
  /** The source CRS as found in the file (e.g. 'EPSG:2193'), reprojected to WGS 84 longitude/latitude. */
  sourceCrs: string;
  layers: VectorLayerInfo[];
}

function fileError(source: string, message: string, problem: string, layer?: string, code = 'bad_geopackage'): InputError {
  return new InputError(
    `${source}${layer ? `, layer "${layer}"` : ''}: ${message}`,
    [{ feature: source, ...(layer ? { field: `layer ${layer}` } : {}), problem }],
    code,
  );
}

/** The EPSG code a WKT CRS names for itself: its outermost AUTHORITY["EPSG","n"] (WKT 1) or ID["EPSG",n] (WKT 2). */
export function wktEpsgCode(wkt: string): number | null {
  const m = /(?:AUTHORITY\[\s*"EPSG"\s*,\s*"?(\d{4,6})"?\s*\]|ID\[\s*"EPSG"\s*,\s*(\d{4,6})\s*(?:,[^\]]*)?\])\s*\]\s*$/i.exec(wkt.trim());
  return m ? Number(m[1] ?? m[2]) : null;
}

/**
 * A proj4 converter from a CRS (EPSG code or WKT) to WGS 84 lon/lat, or null when it is already lon/lat WGS 84. A WKT
 * that names its EPSG code is read as that code's offline definition, so its datum shift is the corrected one and a
 * CRS that needs a datum grid file is refused (crs_needs_datum_grid) as it is for an EPSG code; so is a WKT without
 * a code whose PROJ4_GRIDS or PROJ4 extension asks for a grid file.
 */
export async function toWgs84(crs: { epsg?: number; wkt?: string }): Promise<((p: Position) => Position) | null> {
  let def: string;
  const code = crs.epsg ?? (crs.wkt !== undefined ? wktEpsgCode(crs.wkt) : null);
  if (code !== null) {
    if (code === 4326) return null;
    def = await loadCrsDefinition(`EPSG:${code}`);
  } else {
    def = crs.wkt ?? '';
    const grids = /EXTENSION\[\s*"PROJ4_GRIDS"\s*,\s*"([^"]*)"/i.exec(def)?.[1];
    const proj = /EXTENSION\[\s*"PROJ4"\s*,\s*"([^"]*)"/i.exec(def)?.[1];
    refuseGridShift('the CRS of the layer (WKT)', grids !== undefined ? `+nadgrids=${grids}` : (proj ?? ''));
  }
  const conv = proj4(def, WGS84_DEF);
  return (p: Position) => conv.forward([p[0], p[1]]);
}

/** The feature layers (tables with a geometry column) and their feature counts; a file error when not a GeoPackage. */
function listLayers(db: Database.Database, source: string): VectorLayerInfo[] {
  try {
    const rows = db
      .prepare(
        "SELECT c.table_name AS name, g.geometry_type_name AS geometryType, g.srs_id AS srsId, g.column_name AS col FROM gpkg_contents c JOIN gpkg_geometry_columns g ON g.table_name = c.table_name WHERE c.data_type = 'features' ORDER BY c.table_name",
      )
      .all() as { name: string; geometryType: string; srsId: number; col: string }[];
    return rows.map((r) => ({
      name: r.name,
      geometryType: r.geometryType,
      srsId: r.srsId,
      features: (db.prepare(`SELECT count(*) AS n FROM ${quote(r.name)}`).get() as { n: number }).n,
    }));
  } catch (e) {
    throw fileError(
      source,
      'not a GeoPackage (or corrupt)',
      `expected the OGC GeoPackage tables gpkg_contents and gpkg_geometry_columns: ${e instanceof Error ? e.message : String(e)}`,
    );
  }
}

/** The layer named by `wanted`, or the only one; errors name the layers when there are none, several or no match. */
function chooseLayer(layers: VectorLayerInfo[], wanted: string | undefined, source: string): VectorLayerInfo {
  if (layers.length === 0) throw fileError(source, 'holds no feature layer', 'expected a point, line or polygon layer', undefined, 'no_features');
  if (wanted !== undefined) {
    const layer = layers.find((l) => l.name === wanted);
    if (!layer) throw fileError(source, `has no layer "${wanted}"`, `layers: ${layers.map((l) => l.name).join(', ')}`, undefined, 'unknown_layer');
    return layer;
  }
  if (layers.length > 1) {
    throw fileError(
      source,
      `holds ${layers.length} layers: choose one (layer=NAME, --layer NAME)`,
      `layers: ${layers.map((l) => `${l.name} (${l.geometryType}, ${l.features} features)`).join(', ')}`,
      undefined,
      'choose_layer',
    );
  }
  return layers[0];
}

/** The layer's CRS as named in the file and its converter to WGS 84 (null: already lon/lat WGS 84). */
async function layerProjection(
  db: Database.Database,
  layer: VectorLayerInfo,
  source: string,
): Promise<{ project: ((p: Position) => Position) | null; sourceCrs: string }> {
  const name = layer.name;
  const srs = db.prepare('SELECT organization, organization_coordsys_id AS code, definition FROM gpkg_spatial_ref_sys WHERE srs_id = ?').get(layer.srsId) as
    { organization: string; code: number; definition: string } | undefined;
  if (!srs || layer.srsId === 0 || layer.srsId === -1 || (/^undefined$/i.test(srs.definition.trim()) && !/^epsg$/i.test(srs.organization))) {
    throw fileError(
      source,
      'has no coordinate reference system',
      `srs_id ${layer.srsId} is undefined: assign a CRS (e.g. EPSG code) in your GIS and export again`,
      name,
      'no_crs',
    );
  }
  try {
    if (/^epsg$/i.test(srs.organization)) return { sourceCrs: `EPSG:${srs.code}`, project: await toWgs84({ epsg: srs.code }) };
    const code = wktEpsgCode(srs.definition);
    return { sourceCrs: code !== null ? `EPSG:${code}` : srs.definition, project: await toWgs84({ wkt: srs.definition }) };
  } catch (e) {
    // A CRS that needs a datum grid file keeps its own answer (what to give instead); anything else is unusable.
    if (e instanceof InputError && e.code === 'crs_needs_datum_grid') throw fileError(source, e.message, e.details[0]?.problem ?? e.message, name, e.code);
    throw fileError(source, 'has a CRS that cannot be used', e instanceof Error ? e.message : String(e), name, 'bad_crs');
  }
}

/** The columns of table `name` marked as JSON text in the schema extension (none without it). */
function jsonColumns(db: Database.Database, name: string): Set<string> {
  try {
    return new Set(
      (db.prepare("SELECT column_name AS c FROM gpkg_data_columns WHERE table_name = ? AND mime_type = 'application/json'").all(name) as { c: string }[]).map(
        (r) => r.c,
      ),
    );
  } catch {
    return new Set(); // no schema extension
  }
}

/** The features of table `name` as GeoJSON: geometries through `project`, BOOLEAN and JSON columns restored. */
function readFeatures(db: Database.Database, name: string, project: (p: Position) => Position, source: string): GeoJsonFeature[] {
  const cols = db.prepare(`PRAGMA table_info(${quote(name)})`).all() as { name: string; type: string; pk: number }[];
  const geomCol = (db.prepare('SELECT column_name AS c FROM gpkg_geometry_columns WHERE table_name = ?').get(name) as { c: string }).c;
  const jsonCols = jsonColumns(db, name);
  const props = cols.filter((c) => c.name !== geomCol && c.pk === 0);
  const features: GeoJsonFeature[] = [];
  let k = 0;
  for (const row of db.prepare(`SELECT * FROM ${quote(name)}`).iterate() as Iterable<Record<string, unknown>>) {
    k++;
    const blob = row[geomCol];
    let geometry: GeoJsonGeometry | null = null;
    if (blob instanceof Uint8Array) {
      try {
        geometry = geometryFromGpkg(blob, project);
      } catch (e) {
        throw fileError(source, `feature ${k} has a geometry that cannot be read`, e instanceof Error ? e.message : String(e), name, 'bad_geometry');
      }
    }
    const properties: Record<string, unknown> = {};
    for (const c of props) {
      let v = row[c.name];
      if (typeof v === 'bigint') v = Number(v);
      if (v !== null && /^BOOLEAN$/i.test(c.type)) v = v !== 0;
      else if (typeof v === 'string' && jsonCols.has(c.name)) {
        try {
          v = JSON.parse(v);
        } catch {
          /* kept as text */
        }
      }
      if (v !== null && v !== undefined) properties[c.name] = v;
    }
    features.push({ type: 'Feature', geometry, properties });
  }
  return features;
}

/**
 * Reads one point, line or polygon layer of a GeoPackage (its bytes) as GeoJSON in WGS 84 longitude/latitude.
 * `layer` chooses among several (required then). InputErrors name the file, the layer and the problem: not a
 * GeoPackage or corrupt, no feature layer, an unknown layer, no CRS, an unknown CRS, an undecodable geometry.
 */
export async function readGeoPackage(bytes: Uint8Array, opts: { source?: string; layer?: string; maxFeatures?: number } = {}): Promise<VectorRead> {
  const source = opts.source ?? 'GeoPackage';
  let db: Database.Database;
  try {
    db = new Database(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength), { readonly: true });
  } catch (e) {
    throw fileError(source, 'not a readable GeoPackage', e instanceof Error ? e.message : String(e));
  }
  try {
    const layers = listLayers(db, source);
    const layer = chooseLayer(layers, opts.layer, source);
    const name = layer.name;
    if (opts.maxFeatures !== undefined && layer.features > opts.maxFeatures)
      throw fileError(source, `has ${layer.features} features (limit ${opts.maxFeatures})`, `at most ${opts.maxFeatures} features`, name, 'too_many_features');
    const { project, sourceCrs } = await layerProjection(db, layer, source);
    const features = readFeatures(db, name, project ?? ((p: Position) => [p[0], p[1]]), source);
    return { collection: { type: 'FeatureCollection', features }, layer: name, sourceCrs, layers };
  } finally {
    db.close();
  }
}
