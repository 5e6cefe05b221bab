/**
 * What the point-field verbs (`interpolate`, `simulate`) read the same way: text and JSON files with errors naming
 * the option, the points (GeoJSON, CSV with longitude/latitude or x/y in --points-crs, GeoPackage or zipped
 * Shapefile reprojected to WGS 84) with their SHA-256, and the grid and search options.
 */
import { readFile } from 'node:fs/promises';
import { createHash } from 'node:crypto';
import { InputError } from '../../shared/errors.ts';
import { pointsFromGeoJson, pointsFromCsv } from '../../shared/schema/interp.ts';
import { loadCrsDefinition, converter, WGS84_DEF } from '../../shared/interp/projection.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import { formatFromPath, inFileLayer, readVectorFile } from '../io/vector-input.ts';
import { numberOption, numberListOption } from './args.ts';

export const sha256 = (s: string | Uint8Array) => createHash('sha256').update(s).digest('hex');

/** The text of the file given to option `what`. */
export async function readText(path: string, what: string): Promise<string> {
  try {
    return await readFile(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read ${what} file ${path}`, [{ field: what, problem: (e as NodeJS.ErrnoException).code ?? String(e) }], 'file_not_found');
  }
}

export function parseJson(text: string, path: string): unknown {
  try {
    return JSON.parse(text);
  } catch (e) {
    throw new InputError(`${path} is not valid JSON`, [{ problem: e instanceof Error ? e.message : String(e) }], 'bad_json');
  }
}

export interface PointFileOptions {
  /** CRS of a CSV's x,y columns (none: longitude,latitude columns). */
  pointsCrs?: string;
  skipMissing: boolean;
  /** Property holding each point's measurement standard deviation. */
  errorField?: string;
  /** Layer of a GeoPackage or zipped Shapefile. */
  layer?: string;
}

/** The points of `field` in the file at `path` (the --points option), their warnings and the file's SHA-256. */
export async function readPointsFile(path: string, field: string, o: PointFileOptions): Promise<{ points: PointData; warnings: string[]; sha256: string }> {
  if (/\.(gpkg|zip|shz)$/i.test(path)) {
    const bytes = await readFile(path).catch((e: NodeJS.ErrnoException) => {
      throw new InputError(`cannot read points file ${path}`, [{ field: 'points', problem: e.code ?? String(e) }], 'file_not_found');
    });
    const v = await readVectorFile(bytes, { format: formatFromPath(path) as 'gpkg' | 'shapefile', source: path, layer: o.layer });
    const r = inFileLayer(path, v.layer, () => pointsFromGeoJson(v.collection, field, { skipMissing: o.skipMissing, source: path }));
    const warnings = [...r.warnings];
    if (v.sourceCrs !== 'EPSG:4326')
      warnings.push(`${path}${v.layer ? `, layer "${v.layer}"` : ''}: reprojected from ${v.sourceCrs} to WGS 84 longitude/latitude`);
    return { points: r.points, warnings, sha256: sha256(bytes) };
  }
  const text = await readText(path, 'points');
  if (/\.csv$/i.test(path)) {
    let toLonLat: ((x: number, y: number) => [number, number]) | undefined;
    if (o.pointsCrs !== undefined) {
      const c = converter(await loadCrsDefinition(o.pointsCrs), WGS84_DEF);
      toLonLat = (x, y) => c.forward([x, y]);
    }
    const r = pointsFromCsv(text, field, { skipMissing: o.skipMissing, source: path, toLonLat, errorField: o.errorField });
    return { points: r.points, warnings: r.warnings, sha256: sha256(text) };
  }
  const r = pointsFromGeoJson(parseJson(text, path), field, { skipMissing: o.skipMissing, source: path, errorField: o.errorField });
  return { points: r.points, warnings: r.warnings, sha256: sha256(text) };
}

/** --size NXxNY. */
export function sizeOption(raw: string | undefined): [number, number] | undefined {
  if (raw === undefined) return undefined;
  const m = /^(\d+)x(\d+)$/i.exec(raw.trim());
  if (!m) throw new InputError(`--size must be NXxNY, got "${raw}"`, [{ field: 'size', problem: 'expected e.g. 400x300' }], 'bad_option');
  return [Number(m[1]), Number(m[2])];
}

/** --bbox W,S,E,N in degrees. */
export function bboxOption(raw: string | undefined): [number, number, number, number] | undefined {
  if (raw === undefined) return undefined;
  const b = numberListOption('bbox', raw, []);
  if (b.length !== 4)
    throw new InputError(
      `--bbox needs 4 numbers W,S,E,N, got ${b.length}`,
      [{ field: 'bbox', problem: 'expected west,south,east,north in degrees' }],
      'bad_option',
    );
  return b as [number, number, number, number];
}

/** --neighbors K|all. */
export function neighborsOption(raw: string | undefined): number | 'all' | undefined {
  if (raw === undefined || raw === 'all') return raw;
  const k = numberOption('neighbors', raw);
  if (!(Number.isInteger(k) && k >= 1))
    throw new InputError(`--neighbors must be a positive integer or "all", got ${raw}`, [{ field: 'neighbors', problem: 'expected ≥ 1' }], 'bad_option');
  return k;
}

/** An optional number option (e.g. --lag-km). */
export const optionalNumber = (name: string, raw: string | undefined) => (raw === undefined ? undefined : numberOption(name, raw));
