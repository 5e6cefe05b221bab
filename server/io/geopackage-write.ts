/**
 * Writing a GeoPackage (OGC 12-128r18, GeoPackage Encoding Standard 1.3) through better-sqlite3: one feature table
 * per layer (WGS 84, EPSG:4326, x = longitude, y = latitude), geometries as GeoPackage binary (gpkg-geometry.ts),
 * properties as REAL, INTEGER, BOOLEAN or TEXT columns (objects and arrays as JSON text, marked `application/json` in
 * gpkg_data_columns, the schema extension), and the caution and provenance in the metadata extension (gpkg_metadata +
 * gpkg_metadata_reference) as GDAL metadata XML, so `ogrinfo` shows them.
 */
import Database from 'better-sqlite3';
import { CAUTION } from '../../shared/caution.ts';
import { gpkgGeometry, type GeoJsonCollection, type GeoJsonFeature, type GeoJsonGeometry } from './gpkg-geometry.ts';

const WGS84_WKT =
  'GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563,AUTHORITY["EPSG","7030"]],AUTHORITY["EPSG","6326"]],PRIMEM["Greenwich",0,AUTHORITY["EPSG","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]],AXIS["Latitude",NORTH],AXIS["Longitude",EAST],AUTHORITY["EPSG","4326"]]';

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

/** An SQL identifier in double quotes. */
export const quote = (id: string) => `"${id.replace(/"/g, '""')}"`;

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

/** The GeoPackage's own tables (core, metadata and schema extensions), its CRS rows and extension rows. */
function createSchema(db: Database.Database): void {
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
}

/** The caution and `metadata` items as GDAL metadata XML, referenced at GeoPackage level. */
function writeMetadata(db: Database.Database, metadata: Record<string, string>): void {
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
}

/** Column names for the properties: unique case-insensitively and clear of `fid` and `geom`. */
function columnNames(keys: Iterable<string>): Map<string, string> {
  const colName = new Map<string, string>();
  const taken = new Set(['fid', 'geom']);
  for (const k of keys) {
    let c = k;
    for (let j = 2; taken.has(c.toLowerCase()); j++) c = `${k}_${j}`;
    taken.add(c.toLowerCase());
    colName.set(k, c);
  }
  return colName;
}

/**
 * The layer's geometry type name: the one type present, its multi kind when single and multi parts of one kind mix
 * (as GIS software expects; `promote` then says single parts are written as multi), else GEOMETRY.
 */
function layerGeometryType(features: GeoJsonFeature[]): { gtype: string; promote: boolean } {
  let types = new Set(features.map((f) => f.geometry?.type).filter((x): x is string => x !== undefined));
  const base = new Set([...types].map((x) => x.replace(/^Multi/, '')));
  let promote = false;
  if (types.size === 2 && base.size === 1 && !base.has('GeometryCollection')) {
    promote = true;
    types = new Set([`Multi${[...base][0]}`]);
  }
  return { gtype: types.size === 1 ? [...types][0].toUpperCase() : 'GEOMETRY', promote };
}

type Columns = Map<string, { type: ColumnType; json: boolean }>;

/** A property value as its column stores it (BOOLEAN as 0/1, JSON text for objects), or null. */
function cellValue(v: unknown, c: { type: ColumnType; json: boolean }): unknown {
  if (v === undefined || v === null) return null;
  if (c.type === 'BOOLEAN') return v ? 1 : 0;
  if (c.type === 'TEXT') return c.json ? JSON.stringify(v) : String(v);
  return v;
}

/** Inserts the features into table `t` in one transaction and returns their xy envelope [minX, minY, maxX, maxY]. */
function insertFeatures(db: Database.Database, t: string, features: GeoJsonFeature[], cols: Columns, colName: Map<string, string>, promote: boolean): number[] {
  const keys = [...cols.keys()];
  const ins = db.prepare(
    `INSERT INTO ${quote(t)} (geom${keys.map((k) => `, ${quote(colName.get(k)!)}`).join('')}) VALUES (?${keys.map(() => ', ?').join('')})`,
  );
  const env = [Infinity, Infinity, -Infinity, -Infinity];
  db.transaction(() => {
    for (const f of features) {
      let g: GeoJsonGeometry | null = f.geometry;
      if (g && promote && !g.type.startsWith('Multi')) g = { type: `Multi${g.type}`, coordinates: [g.coordinates] };
      const blob = g ? gpkgGeometry(g, 4326) : null;
      if (blob && blob[3] & 0b10) {
        env[0] = Math.min(env[0], blob.readDoubleLE(8));
        env[2] = Math.max(env[2], blob.readDoubleLE(16));
        env[1] = Math.min(env[1], blob.readDoubleLE(24));
        env[3] = Math.max(env[3], blob.readDoubleLE(32));
      }
      ins.run(blob, ...keys.map((k) => cellValue(f.properties?.[k], cols.get(k)!)));
    }
  })();
  return env;
}

/** One layer as a feature table `t` with its gpkg_contents, gpkg_geometry_columns and gpkg_data_columns rows. */
function writeLayer(db: Database.Database, t: string, layer: GeoPackageLayer): void {
  const features = layer.collection.features;
  const cols = columnTypes(features);
  const colName = columnNames(cols.keys());
  const { gtype, promote } = layerGeometryType(features);
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
  const [minX, minY, maxX, maxY] = insertFeatures(db, t, features, cols, colName, promote);
  if (minX <= maxX) db.prepare('UPDATE gpkg_contents SET min_x = ?, min_y = ?, max_x = ?, max_y = ? WHERE table_name = ?').run(minX, minY, maxX, maxY, t);
}

/**
 * Writes layers (GeoJSON in WGS 84 longitude/latitude) as a GeoPackage and returns its bytes. `metadata` items
 * (e.g. provenance as JSON) join the caution in the GeoPackage-level metadata.
 */
export function writeGeoPackage(layers: GeoPackageLayer[], metadata: Record<string, string> = {}): Buffer {
  const db = new Database(':memory:');
  try {
    createSchema(db);
    writeMetadata(db, metadata);
    const used = new Set<string>();
    for (const layer of layers) {
      let t = tableName(layer.name);
      for (let k = 2; used.has(t.toLowerCase()); k++) t = `${tableName(layer.name)}_${k}`;
      used.add(t.toLowerCase());
      writeLayer(db, t, layer);
    }
    return db.serialize();
  } finally {
    db.close();
  }
}
