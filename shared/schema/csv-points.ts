import { InputError } from '../errors.ts';
import { swappedLonLatError } from './lonlat-order.ts';

/** Point CSV pieces shared by the data-set reader (features.ts) and the interpolation points reader (interp.ts). */

/** Indexes (−1 when absent) of the degree columns (`longitude|lon|lng`, `latitude|lat`) and projected ones (`x|easting`, `y|northing`). */
export function coordinateColumns(header: string[]): { lon: number; lat: number; x: number; y: number } {
  return {
    lon: header.findIndex((h) => /^(longitude|lon|lng)$/i.test(h)),
    lat: header.findIndex((h) => /^(latitude|lat)$/i.test(h)),
    x: header.findIndex((h) => /^(x|easting)$/i.test(h)),
    y: header.findIndex((h) => /^(y|northing)$/i.test(h)),
  };
}

/**
 * One CSV row's properties, the coordinate columns left out: an empty cell is a missing value, a `numeric` column's
 * cell is read as a number (`bad` is told of one that is not finite; the value is kept), any other cell as text.
 */
export function rowProperties(
  header: string[],
  row: string[],
  coordinates: readonly [number, number],
  numeric: ReadonlySet<string>,
  bad: (column: string, cell: string) => void,
): Record<string, unknown> {
  const props: Record<string, unknown> = {};
  header.forEach((h, c) => {
    if (c === coordinates[0] || c === coordinates[1]) return;
    const cell = row[c].trim();
    if (cell === '') return;
    if (numeric.has(h)) {
      const v = Number(cell);
      if (!Number.isFinite(v)) bad(h, cell);
      props[h] = v;
    } else props[h] = cell;
  });
  return props;
}

/**
 * The data-set reader's coordinate columns: longitude,latitude in degrees, else x,y (easting,northing) when the
 * caller can convert them (`canProject`); refused with a message asking for the CRS (`hint`) otherwise.
 */
export function dataSetCoordinateColumns(header: string[], canProject: boolean, hint: string): { lonCol: number; latCol: number; projected: boolean } {
  const cols = coordinateColumns(header);
  if ((cols.lon < 0 || cols.lat < 0) && cols.x >= 0 && cols.y >= 0) {
    if (!canProject)
      throw new InputError(
        `the CSV has projected ${header[cols.x]},${header[cols.y]} columns but no CRS: ${hint} (or give longitude,latitude columns in degrees)`,
        [{ field: 'crs', problem: 'missing: the CRS of the x,y (easting,northing) columns' }],
        'missing_crs',
      );
    return { lonCol: cols.x, latCol: cols.y, projected: true };
  }
  if (cols.lon < 0 || cols.lat < 0) {
    throw new InputError(
      'CSV header needs longitude,latitude (or lon,lat) columns, or x,y (easting,northing) with their CRS',
      [{ field: cols.lon < 0 ? 'longitude' : 'latitude', problem: `missing column; header is: ${header.join(',')}` }],
      'malformed_csv',
    );
  }
  return { lonCol: cols.lon, latCol: cols.lat, projected: false };
}

/**
 * Degree columns that hold something else: longitude and latitude exchanged (one message with the first offending
 * value, not one per row), or eastings/northings (most rows beyond ±180/±90), refused asking for the CRS (`hint`).
 */
export function checkDegreeColumns(header: string[], rows: string[][], lines: number[], lonCol: number, latCol: number, hint: string): void {
  const swapped = swappedLonLatError(
    rows.map((r, k) => ({ lon: Number(r[lonCol]), lat: Number(r[latCol]), where: `line ${lines[k]}` })),
    `Check that the "${header[lonCol]}" column holds longitudes (east–west, -180 to 180) and "${header[latCol]}" latitudes (north–south, -90 to 90).`,
    { lon: header[lonCol], lat: header[latCol] },
  );
  if (swapped) throw swapped;
  const far = rows.filter((r) => Math.abs(Number(r[lonCol])) > 180 || Math.abs(Number(r[latCol])) > 90);
  if (far.length > 0 && far.length >= rows.length / 2) {
    throw new InputError(
      `the CSV's ${header[lonCol]},${header[latCol]} numbers look projected (${far.length} of ${rows.length} rows beyond ±180°/±90°, e.g. ${far[0][lonCol]}, ${far[0][latCol]}): name the columns x,y (or easting,northing) and ${hint}`,
      [{ field: 'crs', problem: 'coordinates look like eastings/northings in metres, not degrees' }],
      'looks_projected',
    );
  }
}

export interface CsvPoint {
  lon: number;
  lat: number;
  props: Record<string, unknown>;
}

const MEASUREMENT_KEYS = ['depthM', 'depthFt', 'temperatureC', 'temperatureF', 'kind', 'hoursSinceCirculation', 'circulationHours'];

/**
 * Wells from CSV rows, one row per measurement, grouped by well id (`id`, else `wellId`); the location and the
 * well's other properties come from its first row, which also labels it (`line N`) in later messages.
 */
export function wellFeaturesFromRows(points: CsvPoint[], lines: number[]): { features: unknown[]; featureLabels: string[] } {
  const byId = new Map<string, { lon: number; lat: number; props: Record<string, unknown>; measurements: Record<string, unknown>[] }>();
  const firstLine = new Map<string, number>();
  points.forEach((p, k) => {
    const id = String(p.props.id ?? p.props.wellId ?? '');
    if (!firstLine.has(id)) firstLine.set(id, lines[k]);
  });
  for (const p of points) {
    const id = String(p.props.id ?? p.props.wellId ?? '');
    const m: Record<string, unknown> = {};
    const rest: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(p.props)) (MEASUREMENT_KEYS.includes(k) ? m : rest)[k] = v;
    const w = byId.get(id) ?? { lon: p.lon, lat: p.lat, props: { ...rest, id: id || undefined }, measurements: [] };
    w.measurements.push(m);
    byId.set(id, w);
  }
  const features = [...byId.values()].map((w) => ({
    type: 'Feature',
    geometry: { type: 'Point', coordinates: [w.lon, w.lat] },
    properties: { ...w.props, measurements: w.measurements },
  }));
  return { features, featureLabels: [...byId.keys()].map((id) => `line ${firstLine.get(id)}`) };
}
