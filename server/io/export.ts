/**
 * Export writers of the grid products. Every file carries the caution (shared/caution.ts) and its provenance
 * (tool version, method, model, SHA-256 content hash of the inputs):
 * - GeoTIFF: Cloud-Optimized, single band Float32 with GeoKeys and NoData through server/io/geotiff.ts; caution and
 *   provenance in GDAL's metadata tag (items CAUTION, TITLE, UNITS, METADATA).
 * - PNG: RGBA through a ramp or class table (NoData transparent); tEXt chunks `Caution`, `Legend` (value → colour,
 *   units, in words), `LegendJSON` and `Provenance`.
 * - GeoJSON (RFC 7946): a FeatureCollection with top-level foreign members `caution` and `provenance`.
 * - CSV of cells inside a polygon: a leading `# caution: …` comment line, then `# provenance: {…}`, then the header.
 */
import { createHash } from 'node:crypto';
import { CAUTION } from '../../shared/caution.ts';
import type { Grid, GridSpec } from '../../shared/grid/grid.ts';
import { xFromCol, yFromRow } from '../../shared/grid/grid.ts';
import { cellsInsideRings, ringsOfGeometry } from '../../shared/grid/polygon-cells.ts';
import { colorizeWithLegend, legendText } from '../../shared/grid/colorize.ts';
import type { Ramp } from '../../shared/grid/ramps.ts';
import type { Legend } from '../../shared/schema/run.ts';
import type { Provenance } from '../../shared/products/provenance.ts';
import { canonicalJson } from '../../shared/products/provenance.ts';
import { InputError } from '../../shared/errors.ts';
import { writeGeoTiff } from './geotiff.ts';
import { writeGeoPackage, type GeoJsonCollection } from './geopackage.ts';
import { encodePng } from './png.ts';

/** SHA-256 hex digest (FIPS 180-4) of text (UTF-8) or bytes. */
export function sha256Hex(data: string | Uint8Array): string {
  return createHash('sha256').update(data).digest('hex');
}

/** SHA-256 of the canonical JSON of a value (key order does not matter). */
export function sha256Json(value: unknown): string {
  return sha256Hex(canonicalJson(value));
}

/** Cloud-Optimized GeoTIFF bytes of a product grid with its description and provenance; class grids (codes) take
 * nearest-neighbour overviews. */
export function geotiffBytes(
  grid: Grid<Float32Array | Float64Array>,
  description: string,
  provenance: Provenance,
  opts: { classes?: boolean } = {},
): Uint8Array {
  return writeGeoTiff(grid, { description, metadata: { provenance }, classes: opts.classes });
}

/**
 * One GeoPackage of a run's vector results: one table per GeoJSON layer (contours, isograds, cross-validation
 * residuals, fault report…), each layer's provenance in its description, the caution and the run's provenance in
 * the GeoPackage metadata.
 */
export function vectorsGeoPackage(layers: { name: string; title: string; geojson: string }[], runProvenance: unknown): Buffer {
  return writeGeoPackage(
    layers.map((l) => {
      const fc = JSON.parse(l.geojson) as GeoJsonCollection & { provenance?: unknown };
      return {
        name: l.name,
        title: l.title,
        description: fc.provenance === undefined ? l.title : `${l.title}; provenance ${JSON.stringify(fc.provenance)}`,
        collection: { type: 'FeatureCollection', features: fc.features },
      };
    }),
    { PROVENANCE: JSON.stringify(runProvenance ?? null) },
  );
}

/** ASCII-safe JSON (PNG tEXt is Latin-1): characters above U+007E \u-escaped. */
function asciiJson(v: unknown): string {
  return JSON.stringify(v).replace(/[\u007f-\uffff]/g, (c) => '\\u' + c.charCodeAt(0).toString(16).padStart(4, '0'));
}

/** Colour-mapped PNG of a grid with its legend (ramp legends need their ramp) and provenance in tEXt chunks. */
export function pngBytes(grid: Grid<Float32Array | Float64Array>, legend: Legend, ramp: Ramp | null, provenance: Provenance, title: string): Uint8Array {
  const px = colorizeWithLegend(grid.values, legend, ramp);
  return new Uint8Array(
    encodePng(px, grid.width, grid.height, 4, {
      Title: title,
      Caution: CAUTION,
      Legend: `${legendText(legend)}\n${CAUTION}`,
      LegendJSON: asciiJson(legend),
      Provenance: asciiJson(provenance),
    }),
  );
}

/** A GeoJSON FeatureCollection text with the caution and provenance as top-level members. */
export function geojsonText(collection: { type: 'FeatureCollection'; features: unknown[] }, provenance: Provenance): string {
  return JSON.stringify({ type: 'FeatureCollection', caution: CAUTION, provenance, features: collection.features });
}

function csvField(v: string): string {
  return /[",\n\r]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v;
}

function csvNumber(v: number, digits: number): string {
  return Number.isFinite(v) ? String(+v.toFixed(digits)) : '';
}

export interface CsvColumn {
  /** Column header (name the units in it, e.g. `depth-300C (km)`). */
  header: string;
  grid: Grid<Float32Array | Float64Array>;
  /** Decimal places (default 4). */
  digits?: number;
}

/**
 * CSV of the cells whose centres lie inside a polygon (GeoJSON Polygon/MultiPolygon in lon/lat, even–odd):
 * `longitude,latitude,row,col` and one column per grid (all on the same grid). Empty fields are NoData.
 * `toGridCrs` maps lon/lat to the grid CRS and `toLonLat` back (both needed for a projected grid).
 */
export function cellsInPolygonCsv(
  columns: CsvColumn[],
  polygon: { type: string; coordinates: unknown },
  provenance: Provenance,
  opts: { toGridCrs?: (lon: number, lat: number) => [number, number]; toLonLat?: (x: number, y: number) => [number, number] } = {},
): string {
  if (columns.length === 0) throw new RangeError('a CSV export needs at least one grid');
  const g0: GridSpec = columns[0].grid;
  for (const c of columns) {
    const g = c.grid;
    if (g.width !== g0.width || g.height !== g0.height || g.west !== g0.west || g.north !== g0.north || g.dx !== g0.dx || g.dy !== g0.dy || g.crs !== g0.crs) {
      throw new RangeError(`grid of column "${c.header}" differs from the first column's`);
    }
  }
  const projected = !/^EPSG:4326$/i.test(g0.crs);
  if (projected && (opts.toGridCrs === undefined || opts.toLonLat === undefined)) throw new RangeError(`a ${g0.crs} grid needs toGridCrs and toLonLat`);
  if (polygon.type !== 'Polygon' && polygon.type !== 'MultiPolygon') {
    throw new InputError(
      `cells can be listed inside a Polygon or MultiPolygon, got ${polygon.type}`,
      [{ field: 'geometry.type', problem: 'expected Polygon or MultiPolygon' }],
      'bad_geometry',
    );
  }
  const rings = ringsOfGeometry(polygon, opts.toGridCrs);
  const cells = cellsInsideRings(g0, rings);
  const lines: string[] = [`# caution: ${CAUTION}`, `# provenance: ${JSON.stringify(provenance)}`];
  lines.push(['longitude', 'latitude', 'row', 'col', ...columns.map((c) => csvField(c.header))].join(','));
  for (const idx of cells) {
    const row = Math.floor(idx / g0.width),
      col = idx - row * g0.width;
    const x = xFromCol(g0, col),
      y = yFromRow(g0, row);
    const [lon, lat] = projected ? opts.toLonLat!(x, y) : [x, y];
    lines.push([lon.toFixed(7), lat.toFixed(7), String(row), String(col), ...columns.map((c) => csvNumber(c.grid.values[idx], c.digits ?? 4))].join(','));
  }
  return lines.join('\n') + '\n';
}
