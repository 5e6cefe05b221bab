/**
 * GeoPackage (OGC 12-128r18, GeoPackage Encoding Standard 1.3) in and out, through better-sqlite3.
 *
 * Out: one feature table per layer (WGS 84, EPSG:4326, x = longitude, y = latitude), geometries as GeoPackage
 * binary (§2.1.3: "GP" header, version 0, little-endian, xy envelope, then ISO WKB), properties as REAL, INTEGER,
 * BOOLEAN or TEXT columns (objects and arrays as JSON text, marked `application/json` in gpkg_data_columns, the schema
 * extension), and the caution and provenance in the metadata extension (gpkg_metadata + gpkg_metadata_reference) as
 * GDAL metadata XML, so `ogrinfo` shows them.
 *
 * In: the point, line and polygon layers of any GeoPackage; a layer is chosen by name when there are several; its
 * coordinates are reprojected to WGS 84 longitude/latitude from the EPSG code in gpkg_spatial_ref_sys (definitions
 * offline from epsg-index) or, failing that, from its WKT definition (proj4).
 */
import Database from 'better-sqlite3';
import proj4 from 'proj4';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';

type Position = number[];
export interface GeoJsonGeometry {
  type: string;
  coordinates?: unknown;
  geometries?: GeoJsonGeometry[];
}
export interface GeoJsonFeature {
  type: 'Feature';
  geometry: GeoJsonGeometry | null;
  properties: Record<string, unknown> | null;
}
export interface GeoJsonCollection {
  type: 'FeatureCollection';
  features: GeoJsonFeature[];
}

const WGS84_WKT =
  'GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563,AUTHORITY["EPSG","7030"]],AUTHORITY["EPSG","6326"]],PRIMEM["Greenwich",0,AUTHORITY["EPSG","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]],AXIS["Latitude",NORTH],AXIS["Longitude",EAST],AUTHORITY["EPSG","4326"]]';

// ---------------------------------------------------------------------------------------------------------------
// WKB (OGC Simple Features 1.2.1 §8.2, ISO 19125) and the GeoPackage binary header.

const WKB_CODE: Record<string, number> = { Point: 1, LineString: 2, Polygon: 3, MultiPoint: 4, MultiLineString: 5, MultiPolygon: 6, GeometryCollection: 7 };
const WKB_NAME = Object.fromEntries(Object.entries(WKB_CODE).map(([k, v]) => [v, k])) as Record<number, string>;

class ByteWriter {
  private buf = Buffer.alloc(256);
  length = 0;
  private room(n: number) {
    if (this.length + n <= this.buf.length) return;
    const b = Buffer.alloc(Math.max(this.buf.length * 2, this.length + n));
    this.buf.copy(b, 0, 0, this.length);
    this.buf = b;
  }
  u8(v: number) {
    this.room(1);
    this.buf.writeUInt8(v, this.length);
    this.length += 1;
  }
  u32(v: number) {
    this.room(4);
    this.buf.writeUInt32LE(v, this.length);
    this.length += 4;
  }
  i32(v: number) {
    this.room(4);
    this.buf.writeInt32LE(v, this.length);
    this.length += 4;
  }
  f64(v: number) {
    this.room(8);
    this.buf.writeDoubleLE(v, this.length);
    this.length += 8;
  }
  bytes(): Buffer {
    return this.buf.subarray(0, this.length);
  }
}

function badGeometry(what: string): InputError {
  return new InputError(`cannot write geometry: ${what}`, [{ field: 'geometry', problem: what }], 'bad_geometry');
}

function writeWkb(w: ByteWriter, g: GeoJsonGeometry, env: number[]): void {
  const code = WKB_CODE[g.type];
  if (code === undefined) throw badGeometry(`unknown type ${g.type}`);
  w.u8(1);
  w.u32(code);
  const pt = (p: Position) => {
    const x = Number(p[0]),
      y = Number(p[1]);
    w.f64(x);
    w.f64(y);
    if (x < env[0]) env[0] = x;
    if (x > env[1]) env[1] = x;
    if (y < env[2]) env[2] = y;
    if (y > env[3]) env[3] = y;
  };
  const line = (ps: Position[]) => {
    w.u32(ps.length);
    for (const p of ps) pt(p);
  };
  const poly = (rs: Position[][]) => {
    w.u32(rs.length);
    for (const r of rs) line(r);
  };
  const c = g.coordinates as never;
  switch (g.type) {
    case 'Point': {
      const p = c as Position;
      if (p.length < 2) {
        w.f64(NaN);
        w.f64(NaN);
      } else pt(p);
      break;
    }
    case 'LineString':
      line(c);
      break;
    case 'Polygon':
      poly(c);
      break;
    case 'MultiPoint':
      w.u32((c as Position[]).length);
      for (const p of c as Position[]) writeWkb(w, { type: 'Point', coordinates: p }, env);
      break;
    case 'MultiLineString':
      w.u32((c as Position[][]).length);
      for (const l of c as Position[][]) writeWkb(w, { type: 'LineString', coordinates: l }, env);
      break;
    case 'MultiPolygon':
      w.u32((c as Position[][][]).length);
      for (const p of c as Position[][][]) writeWkb(w, { type: 'Polygon', coordinates: p }, env);
      break;
    case 'GeometryCollection':
      w.u32(g.geometries?.length ?? 0);
      for (const s of g.geometries ?? []) writeWkb(w, s, env);
      break;
  }
}

/** GeoPackage binary geometry (§2.1.3): header with the xy envelope [minx, maxx, miny, maxy], then WKB. */
export function gpkgGeometry(g: GeoJsonGeometry, srsId: number): Buffer {
  const body = new ByteWriter();
  const env = [Infinity, -Infinity, Infinity, -Infinity];
  writeWkb(body, g, env);
  const empty = !(env[0] <= env[1]);
  const head = new ByteWriter();
  head.u8(0x47);
  head.u8(0x50);
  head.u8(0); // "GP", version 0
  head.u8(empty ? 0b10001 : 0b00011); // little-endian; envelope xy (or none and the empty flag)
  head.i32(srsId);
  if (!empty) for (const v of env) head.f64(v);
  return Buffer.concat([head.bytes(), body.bytes()]);
}

/** Decodes GeoPackage binary to GeoJSON (Z and M dropped), applying `project` to each position. */
export function geometryFromGpkg(blob: Uint8Array, project: (p: Position) => Position): GeoJsonGeometry | null {
  const dv = new DataView(blob.buffer, blob.byteOffset, blob.byteLength);
  if (blob.length < 8 || blob[0] !== 0x47 || blob[1] !== 0x50) throw new Error('not a GeoPackage geometry (no "GP" magic)');
  const flags = blob[3];
  if (flags & 0b100000) throw new Error('extended GeoPackage geometry types are not read');
  const envBytes = [0, 32, 48, 48, 64][(flags >> 1) & 7];
  if (envBytes === undefined) throw new Error('bad envelope indicator');
  let o = 8 + envBytes;
  const geom = (): GeoJsonGeometry => {
    const le = dv.getUint8(o) === 1;
    o += 1;
    let t = dv.getUint32(o, le);
    o += 4;
    // ISO WKB adds 1000 (Z), 2000 (M), 3000 (ZM); extended WKB sets the high bits.
    let dims = 2;
    if (t & 0x80000000) dims++;
    if (t & 0x40000000) dims++;
    t &= 0x0fffffff;
    if (t > 1000) {
      dims += Math.floor(t / 1000) === 3 ? 2 : 1;
      t %= 1000;
    }
    const pos = (): Position => {
      const p = [dv.getFloat64(o, le), dv.getFloat64(o + 8, le)];
      o += 8 * dims;
      return project(p);
    };
    const n = () => {
      const v = dv.getUint32(o, le);
      o += 4;
      return v;
    };
    const line = () => Array.from({ length: n() }, pos);
    const name = WKB_NAME[t];
    switch (name) {
      case 'Point':
        return { type: 'Point', coordinates: pos() };
      case 'LineString':
        return { type: 'LineString', coordinates: line() };
      case 'Polygon':
        return { type: 'Polygon', coordinates: Array.from({ length: n() }, line) };
      case 'MultiPoint':
      case 'MultiLineString':
      case 'MultiPolygon': {
        const parts = Array.from({ length: n() }, geom);
        return { type: name, coordinates: parts.map((p) => p.coordinates) };
      }
      case 'GeometryCollection':
        return { type: 'GeometryCollection', geometries: Array.from({ length: n() }, geom) };
      default:
        throw new Error(`WKB geometry type ${t} is not read`);
    }
  };
  if (flags & 0b10000) return null; // empty
  return geom();
}

// ---------------------------------------------------------------------------------------------------------------
// Writing.

export interface GeoPackageLayer {
  /** Table name (letters, digits, underscores; other characters become underscores). */
  name: string;
  title?: string;
  description?: string;
  collection: GeoJsonCollection;
}

function xmlText(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

export function tableName(name: string): string {
  const t = name.replace(/[^A-Za-z0-9_]/g, '_').replace(/^(?=\d)/, 'l_');
  return /^gpkg_|^rtree_|^sqlite_/i.test(t) ? `l_${t}` : t;
}

const quote = (id: string) => `"${id.replace(/"/g, '""')}"`;

type ColumnType = 'REAL' | 'INTEGER' | 'BOOLEAN' | 'TEXT';

function columnTypes(features: GeoJsonFeature[]): Map<string, { type: ColumnType; json: boolean }> {
  const cols = new Map<string, { type: ColumnType; json: boolean }>();
  for (const f of features) {
    for (const [k, v] of Object.entries(f.properties ?? {})) {
      if (v === null || v === undefined) {
        if (!cols.has(k)) cols.set(k, { type: 'REAL', json: false });
        continue;
      }
      const t: ColumnType = typeof v === 'number' ? (Number.isSafeInteger(v) ? 'INTEGER' : 'REAL') : typeof v === 'boolean' ? 'BOOLEAN' : 'TEXT';
      const json = typeof v === 'object';
      const old = cols.get(k);
      if (!old) {
        cols.set(k, { type: t, json });
        continue;
      }
      // Widen: INTEGER + REAL → REAL; anything else mixed → TEXT (JSON when any value is not a string).
      if (old.type === t) {
        old.json ||= json;
        continue;
      }
      if ((old.type === 'INTEGER' && t === 'REAL') || (old.type === 'REAL' && t === 'INTEGER')) old.type = 'REAL';
      else {
        old.json = old.json || json || t !== 'TEXT' || old.type !== 'TEXT';
        old.type = 'TEXT';
      }
    }
  }
  // Columns seen only as null stay REAL (typeless nulls); a column mixing nulls and values keeps its value type.
  return cols;
}

/**
 * Writes layers (GeoJSON in WGS 84 longitude/latitude) as a GeoPackage and returns its bytes. `metadata` items
 * (e.g. provenance as JSON) join the caution in the GeoPackage-level metadata.
 */
export function writeGeoPackage(layers: GeoPackageLayer[], metadata: Record<string, string> = {}): Buffer {
  const db = new Database(':memory:');
  try {
    db.pragma('application_id = 1196444487'); // "GPKG"
    db.pragma('user_version = 10300');
    db.exec(`
      CREATE TABLE gpkg_spatial_ref_sys (srs_name TEXT NOT NULL, srs_id INTEGER NOT NULL PRIMARY KEY, organization TEXT NOT NULL, organization_coordsys_id INTEGER NOT NULL, definition TEXT NOT NULL, description TEXT);
      CREATE TABLE gpkg_contents (table_name TEXT NOT NULL PRIMARY KEY, data_type TEXT NOT NULL, identifier TEXT UNIQUE, description TEXT DEFAULT '', last_change DATETIME NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')), min_x DOUBLE, min_y DOUBLE, max_x DOUBLE, max_y DOUBLE, srs_id INTEGER, CONSTRAINT fk_gc_r_srs_id FOREIGN KEY (srs_id) REFERENCES gpkg_spatial_ref_sys(srs_id));
      CREATE TABLE gpkg_geometry_columns (table_name TEXT NOT NULL, column_name TEXT NOT NULL, geometry_type_name TEXT NOT NULL, srs_id INTEGER NOT NULL, z TINYINT NOT NULL, m TINYINT NOT NULL, CONSTRAINT pk_geom_cols PRIMARY KEY (table_name, column_name), CONSTRAINT uk_gc_table_name UNIQUE (table_name), CONSTRAINT fk_gc_tn FOREIGN KEY (table_name) REFERENCES gpkg_contents(table_name), CONSTRAINT fk_gc_srs FOREIGN KEY (srs_id) REFERENCES gpkg_spatial_ref_sys (srs_id));
      CREATE TABLE gpkg_extensions (table_name TEXT, column_name TEXT, extension_name TEXT NOT NULL, definition TEXT NOT NULL, scope TEXT NOT NULL, CONSTRAINT ge_tce UNIQUE (table_name, column_name, extension_name));
      CREATE TABLE gpkg_metadata (id INTEGER CONSTRAINT m_pk PRIMARY KEY ASC NOT NULL, md_scope TEXT NOT NULL DEFAULT 'dataset', md_standard_uri TEXT NOT NULL, mime_type TEXT NOT NULL DEFAULT 'text/xml', metadata TEXT NOT NULL DEFAULT '');
      CREATE TABLE gpkg_metadata_reference (reference_scope TEXT NOT NULL, table_name TEXT, column_name TEXT, row_id_value INTEGER, timestamp DATETIME NOT NULL DEFAULT (strftime('%Y-%m-%dT%H:%M:%fZ','now')), md_file_id INTEGER NOT NULL, md_parent_id INTEGER, CONSTRAINT crmr_mfi_fk FOREIGN KEY (md_file_id) REFERENCES gpkg_metadata(id), CONSTRAINT crmr_mpi_fk FOREIGN KEY (md_parent_id) REFERENCES gpkg_metadata(id));
      CREATE TABLE gpkg_data_columns (table_name TEXT NOT NULL, column_name TEXT NOT NULL, name TEXT, title TEXT, description TEXT, mime_type TEXT, constraint_name TEXT, CONSTRAINT pk_gdc PRIMARY KEY (table_name, column_name), CONSTRAINT gdc_tn UNIQUE (table_name, name));
      CREATE TABLE gpkg_data_column_constraints (constraint_name TEXT NOT NULL, constraint_type TEXT NOT NULL, value TEXT, min NUMERIC, min_is_inclusive BOOLEAN, max NUMERIC, max_is_inclusive BOOLEAN, description TEXT, CONSTRAINT gdcc_ntv UNIQUE (constraint_name, constraint_type, value));
    `);
    const srs = db.prepare('INSERT INTO gpkg_spatial_ref_sys VALUES (?, ?, ?, ?, ?, ?)');
    srs.run('Undefined cartesian SRS', -1, 'NONE', -1, 'undefined', 'undefined cartesian coordinate reference system');
    srs.run('Undefined geographic SRS', 0, 'NONE', 0, 'undefined', 'undefined geographic coordinate reference system');
    srs.run('WGS 84 geodetic', 4326, 'EPSG', 4326, WGS84_WKT, 'longitude/latitude coordinates in decimal degrees on the WGS 84 spheroid');
    const ext = db.prepare('INSERT INTO gpkg_extensions VALUES (?, ?, ?, ?, ?)');
    ext.run('gpkg_metadata', null, 'gpkg_metadata', 'http://www.geopackage.org/spec121/#extension_metadata', 'read-write');
    ext.run('gpkg_metadata_reference', null, 'gpkg_metadata', 'http://www.geopackage.org/spec121/#extension_metadata', 'read-write');
    ext.run('gpkg_data_columns', null, 'gpkg_schema', 'http://www.geopackage.org/spec121/#extension_schema', 'read-write');
    ext.run('gpkg_data_column_constraints', null, 'gpkg_schema', 'http://www.geopackage.org/spec121/#extension_schema', 'read-write');
    const items = { CAUTION, ...metadata };
    const xml = `<GDALMetadata>\n${Object.entries(items)
      .map(([k, v]) => `  <Item name="${xmlText(k)}">${xmlText(v)}</Item>`)
      .join('\n')}\n</GDALMetadata>\n`;
    const md = db
      .prepare("INSERT INTO gpkg_metadata (md_scope, md_standard_uri, mime_type, metadata) VALUES ('dataset', 'http://gdal.org', 'text/xml', ?)")
      .run(xml);
    db.prepare(
      "INSERT INTO gpkg_metadata_reference (reference_scope, table_name, column_name, row_id_value, md_file_id) VALUES ('geopackage', NULL, NULL, NULL, ?)",
    ).run(md.lastInsertRowid);

    const used = new Set<string>();
    for (const layer of layers) {
      let t = tableName(layer.name);
      for (let k = 2; used.has(t.toLowerCase()); k++) t = `${tableName(layer.name)}_${k}`;
      used.add(t.toLowerCase());
      const features = layer.collection.features;
      const cols = columnTypes(features);
      const colName = new Map<string, string>();
      const taken = new Set(['fid', 'geom']);
      for (const k of cols.keys()) {
        let c = k;
        for (let j = 2; taken.has(c.toLowerCase()); j++) c = `${k}_${j}`;
        taken.add(c.toLowerCase());
        colName.set(k, c);
      }
      let types = new Set(features.map((f) => f.geometry?.type).filter((x): x is string => x !== undefined));
      // A layer mixing single and multi parts of one kind is written as the multi kind (as GIS software expects).
      const base = new Set([...types].map((x) => x.replace(/^Multi/, '')));
      let promote = false;
      if (types.size === 2 && base.size === 1 && !base.has('GeometryCollection')) {
        promote = true;
        types = new Set([`Multi${[...base][0]}`]);
      }
      const gtype = types.size === 1 ? [...types][0].toUpperCase() : 'GEOMETRY';
      db.exec(
        `CREATE TABLE ${quote(t)} (fid INTEGER PRIMARY KEY AUTOINCREMENT NOT NULL, geom ${gtype}${[...cols].map(([k, c]) => `, ${quote(colName.get(k)!)} ${c.type}`).join('')})`,
      );
      const desc = `${layer.description ?? layer.title ?? ''}${layer.description || layer.title ? ' — ' : ''}${CAUTION}`;
      db.prepare("INSERT INTO gpkg_contents (table_name, data_type, identifier, description, srs_id) VALUES (?, 'features', ?, ?, 4326)").run(
        t,
        layer.title ?? t,
        desc,
      );
      db.prepare('INSERT INTO gpkg_geometry_columns VALUES (?, ?, ?, 4326, 0, 0)').run(t, 'geom', gtype);
      for (const [k, c] of cols)
        if (c.json)
          db.prepare('INSERT INTO gpkg_data_columns (table_name, column_name, name, mime_type) VALUES (?, ?, ?, ?)').run(
            t,
            colName.get(k)!,
            colName.get(k)!,
            'application/json',
          );
      const keys = [...cols.keys()];
      const ins = db.prepare(
        `INSERT INTO ${quote(t)} (geom${keys.map((k) => `, ${quote(colName.get(k)!)}`).join('')}) VALUES (?${keys.map(() => ', ?').join('')})`,
      );
      let minX = Infinity,
        minY = Infinity,
        maxX = -Infinity,
        maxY = -Infinity;
      db.transaction(() => {
        for (const f of features) {
          let g = f.geometry;
          if (g && promote && !g.type.startsWith('Multi')) g = { type: `Multi${g.type}`, coordinates: [g.coordinates] };
          const blob = g ? gpkgGeometry(g, 4326) : null;
          if (blob && blob[3] & 0b10) {
            minX = Math.min(minX, blob.readDoubleLE(8));
            maxX = Math.max(maxX, blob.readDoubleLE(16));
            minY = Math.min(minY, blob.readDoubleLE(24));
            maxY = Math.max(maxY, blob.readDoubleLE(32));
          }
          ins.run(
            blob,
            ...keys.map((k) => {
              const v = f.properties?.[k];
              if (v === undefined || v === null) return null;
              const c = cols.get(k)!;
              if (c.type === 'BOOLEAN') return v ? 1 : 0;
              if (c.type === 'TEXT') return c.json ? JSON.stringify(v) : String(v);
              return v as number;
            }),
          );
        }
      })();
      if (minX <= maxX) db.prepare('UPDATE gpkg_contents SET min_x = ?, min_y = ?, max_x = ?, max_y = ? WHERE table_name = ?').run(minX, minY, maxX, maxY, t);
    }
    return db.serialize();
  } finally {
    db.close();
  }
}

// ---------------------------------------------------------------------------------------------------------------
// Reading.

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

/** A proj4 converter from a CRS (EPSG code or WKT) to WGS 84 lon/lat, or null when it is already lon/lat WGS 84. */
export async function toWgs84(crs: { epsg?: number; wkt?: string }): Promise<((p: Position) => Position) | null> {
  let def: string;
  if (crs.epsg !== undefined) {
    if (crs.epsg === 4326) return null;
    def = await loadCrsDefinition(`EPSG:${crs.epsg}`);
  } else {
    def = crs.wkt ?? '';
  }
  const conv = proj4(def, WGS84_DEF);
  return (p: Position) => conv.forward([p[0], p[1]]);
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
    let layers: VectorLayerInfo[];
    try {
      const rows = db
        .prepare(
          "SELECT c.table_name AS name, g.geometry_type_name AS geometryType, g.srs_id AS srsId, g.column_name AS col FROM gpkg_contents c JOIN gpkg_geometry_columns g ON g.table_name = c.table_name WHERE c.data_type = 'features' ORDER BY c.table_name",
        )
        .all() as { name: string; geometryType: string; srsId: number; col: string }[];
      layers = rows.map((r) => ({
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
    if (layers.length === 0) throw fileError(source, 'holds no feature layer', 'expected a point, line or polygon layer', undefined, 'no_features');
    let layer: VectorLayerInfo | undefined;
    if (opts.layer !== undefined) {
      layer = layers.find((l) => l.name === opts.layer);
      if (!layer) throw fileError(source, `has no layer "${opts.layer}"`, `layers: ${layers.map((l) => l.name).join(', ')}`, undefined, 'unknown_layer');
    } else if (layers.length > 1) {
      throw fileError(
        source,
        `holds ${layers.length} layers: choose one (layer=NAME, --layer NAME)`,
        `layers: ${layers.map((l) => `${l.name} (${l.geometryType}, ${l.features} features)`).join(', ')}`,
        undefined,
        'choose_layer',
      );
    } else {
      layer = layers[0];
    }
    const name = layer.name;
    if (opts.maxFeatures !== undefined && layer.features > opts.maxFeatures)
      throw fileError(source, `has ${layer.features} features (limit ${opts.maxFeatures})`, `at most ${opts.maxFeatures} features`, name, 'too_many_features');
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
    let project: ((p: Position) => Position) | null;
    let sourceCrs: string;
    try {
      if (/^epsg$/i.test(srs.organization)) {
        sourceCrs = `EPSG:${srs.code}`;
        project = await toWgs84({ epsg: srs.code });
      } else {
        sourceCrs = srs.definition;
        project = await toWgs84({ wkt: srs.definition });
      }
    } catch (e) {
      throw fileError(source, 'has a CRS that cannot be used', e instanceof Error ? e.message : String(e), name, 'bad_crs');
    }
    const cols = db.prepare(`PRAGMA table_info(${quote(name)})`).all() as { name: string; type: string; pk: number }[];
    const geomCol = (db.prepare('SELECT column_name AS c FROM gpkg_geometry_columns WHERE table_name = ?').get(name) as { c: string }).c;
    let jsonCols = new Set<string>();
    try {
      jsonCols = new Set(
        (db.prepare("SELECT column_name AS c FROM gpkg_data_columns WHERE table_name = ? AND mime_type = 'application/json'").all(name) as { c: string }[]).map(
          (r) => r.c,
        ),
      );
    } catch {
      /* no schema extension */
    }
    const props = cols.filter((c) => c.name !== geomCol && c.pk === 0);
    const features: GeoJsonFeature[] = [];
    const identity = (p: Position) => [p[0], p[1]];
    let k = 0;
    for (const row of db.prepare(`SELECT * FROM ${quote(name)}`).iterate() as Iterable<Record<string, unknown>>) {
      k++;
      const blob = row[geomCol];
      let geometry: GeoJsonGeometry | null = null;
      if (blob instanceof Uint8Array) {
        try {
          geometry = geometryFromGpkg(blob, project ?? identity);
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
    return { collection: { type: 'FeatureCollection', features }, layer: name, sourceCrs, layers };
  } finally {
    db.close();
  }
}
