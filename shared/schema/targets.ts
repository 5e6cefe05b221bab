/**
 * Where a point-field verb is asked to answer instead of on a grid: target points (`--at`) and block polygons
 * (`--block`), read from GeoJSON (RFC 7946) with errors naming the feature and the field.
 */
import { InputError, type InputProblem } from '../errors.ts';
import { collectionFeatures, pointGeometry } from './geojson.ts';
import type { BlockPolygon } from '../interp/blockKriging.ts';

interface LooseFeature {
  id?: unknown;
  geometry?: { type?: unknown; coordinates?: unknown } | null;
  properties?: Record<string, unknown> | null;
}

/** A feature's label: its `properties.id`, else its GeoJSON `id`, else `${prefix}-${position + 1}`. */
function featureLabel(f: LooseFeature | null | undefined, index: number, prefix: string): string {
  const pid = f?.properties?.id;
  if (typeof pid === 'string' || typeof pid === 'number') return String(pid);
  if (typeof f?.id === 'string' || typeof f?.id === 'number') return String(f.id);
  return `${prefix}-${index + 1}`;
}

/** Whether `rings` is a non-empty list of rings, each of ≥ 4 [lon, lat] positions within the degree ranges. */
function isLonLatRings(rings: unknown): rings is number[][][] {
  const isPosition = (p: unknown) =>
    Array.isArray(p) &&
    p.length >= 2 &&
    Number.isFinite(p[0]) &&
    Number.isFinite(p[1]) &&
    (p[0] as number) >= -180 &&
    (p[0] as number) <= 180 &&
    (p[1] as number) >= -90 &&
    (p[1] as number) <= 90;
  return Array.isArray(rings) && rings.length > 0 && rings.every((r) => Array.isArray(r) && r.length >= 4 && r.every(isPosition));
}

/** Target points for `--at`: any Point features; id from properties.id, the feature id, or the position. */
export function targetsFromGeoJson(input: unknown, source = 'targets'): { ids: string[]; lon: number[]; lat: number[] } {
  const feats = collectionFeatures(input, `${source}: expected a GeoJSON FeatureCollection of points`, 'expected "FeatureCollection"');
  if (feats.length === 0) throw new InputError(`${source}: no target points`, [{ field: 'features', problem: 'expected at least one Point' }], 'empty_dataset');
  const ids: string[] = [],
    lon: number[] = [],
    lat: number[] = [];
  const problems: InputProblem[] = [];
  feats.forEach((f, i) => {
    const feat = (f ?? {}) as LooseFeature;
    const g = pointGeometry.safeParse(feat.geometry);
    if (!g.success) {
      problems.push({ feature: i, field: 'geometry', problem: g.error.issues.map((e) => e.message).join('; ') });
      return;
    }
    ids.push(featureLabel(feat, i, 'target'));
    lon.push(g.data.coordinates[0]);
    lat.push(g.data.coordinates[1]);
  });
  if (problems.length > 0) throw new InputError(`${problems.length} problem(s) in ${source}`, problems.slice(0, 50), 'invalid_features');
  return { ids, lon, lat };
}

/** Block polygons for `--block`: Polygon or MultiPolygon features; id from properties.id, the feature id, or the position. */
export function blockPolygonsFromGeoJson(input: unknown, source: string): BlockPolygon[] {
  const fc = input as { type?: unknown; features?: unknown };
  if (input === null || typeof input !== 'object' || fc.type !== 'FeatureCollection' || !Array.isArray(fc.features) || fc.features.length === 0) {
    throw new InputError(
      `${source}: expected a GeoJSON FeatureCollection of polygons`,
      [{ field: 'features', problem: 'expected at least one Polygon or MultiPolygon' }],
      'bad_geojson',
    );
  }
  return (fc.features as (LooseFeature | null)[]).map((f, i) => {
    const id = featureLabel(f, i, 'block');
    const g = f?.geometry;
    if (g?.type === 'Polygon' && isLonLatRings(g.coordinates)) return { id, rings: g.coordinates };
    if (g?.type === 'MultiPolygon' && Array.isArray(g.coordinates) && g.coordinates.every(isLonLatRings)) return { id, rings: g.coordinates.flat() };
    throw new InputError(
      `${source}: feature ${id} is not a valid Polygon or MultiPolygon in lon/lat degrees`,
      [{ feature: id, field: 'geometry', problem: 'expected Polygon or MultiPolygon rings of ≥ 4 [lon, lat] positions' }],
      'invalid_features',
    );
  });
}
