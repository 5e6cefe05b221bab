/**
 * The files `subtherm interpolate` reads: the points, fault traces (barriers), region polygons (mask) and block
 * polygons, each once, with the SHA-256 of every file for the outputs' provenance.
 */
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { blockPolygonsFromGeoJson } from '../../shared/schema/targets.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import type { BlockPolygon } from '../../shared/interp/blockKriging.ts';
import { parseJson, readPointsFile, readText, sha256 } from './point-input.ts';
import type { InterpolateArgs } from './interpolate-options.ts';
import { trendOption, type TrendChoice } from './drift-input.ts';

export interface InterpolationInputs {
  points: PointData;
  /** Fault traces as lines of [lon, lat] degrees (null: no --faults). */
  faults: number[][][] | null;
  /** Region rings of [lon, lat] degrees (null: no --region). */
  region: number[][][] | null;
  /** Block polygons (null: no --block). */
  blocks: BlockPolygon[] | null;
  /** --trend, with the external drift grid when it names one. */
  trend: TrendChoice;
  /** SHA-256 of each file read, by option name. */
  hashes: Record<string, string>;
}

/** The lines of the fault traces in the file at `path` (LineString and MultiLineString features). */
async function readFaultLines(path: string, hashes: Record<string, string>, warnings: string[]): Promise<number[][][]> {
  const txt = await readText(path, 'faults');
  hashes.faults = sha256(txt);
  const ds = parseFeatureCollection('faults', parseJson(txt, path));
  warnings.push(...ds.warnings);
  const lines: number[][][] = [];
  for (const f of ds.collection.features) {
    const g = f.geometry as { type: string; coordinates: number[][] | number[][][] };
    if (g.type === 'LineString') lines.push(g.coordinates as number[][]);
    else lines.push(...(g.coordinates as number[][][]));
  }
  return lines;
}

/** The rings of the region polygons in the file at `path` (Polygon and MultiPolygon features). */
async function readRegionRings(path: string, hashes: Record<string, string>): Promise<number[][][]> {
  const txt = await readText(path, 'region');
  hashes.region = sha256(txt);
  const ds = parseFeatureCollection('regions', parseJson(txt, path));
  const rings: number[][][] = [];
  for (const f of ds.collection.features) {
    const g = f.geometry as { type: string; coordinates: number[][][] | number[][][][] };
    if (g.type === 'Polygon') rings.push(...(g.coordinates as number[][][]));
    else for (const poly of g.coordinates as number[][][][]) rings.push(...poly);
  }
  return rings;
}

/** Reads every file the arguments name; warnings (skipped features, reprojection) go to `warnings`. */
export async function readInterpolationInputs(
  a: InterpolateArgs & { points: string },
  errorField: string | undefined,
  warnings: string[],
): Promise<InterpolationInputs> {
  const read = await readPointsFile(a.points, a.field, { pointsCrs: a['points-crs'] ?? a.crs, skipMissing: a['skip-missing'], errorField, layer: a.layer });
  warnings.push(...read.warnings);
  const hashes: Record<string, string> = { points: read.sha256 };
  const faults = a.faults === undefined ? null : await readFaultLines(a.faults, hashes, warnings);
  const region = a.region === undefined ? null : await readRegionRings(a.region, hashes);
  let blocks: BlockPolygon[] | null = null;
  if (a.block !== undefined) {
    if (a.method !== 'kriging')
      throw new InputError('--block needs --method kriging', [{ field: 'block', problem: 'block estimates come from block kriging' }], 'bad_option');
    const txt = await readText(a.block, 'block');
    hashes.block = sha256(txt);
    blocks = blockPolygonsFromGeoJson(parseJson(txt, a.block), a.block);
  }
  const trend = await trendOption(a.trend);
  if (trend.sha256 !== null) hashes.drift = trend.sha256;
  return { points: read.points, faults, region, blocks, trend, hashes };
}
