import { z } from 'zod';
import { InputError } from '../errors.ts';

/** A WGS84 position [longitude, latitude] in degrees (RFC 7946 §3.1.1); a third (elevation) member is allowed. */
export const lonLat = z
  .array(z.number())
  .min(2)
  .max(3)
  .refine((p) => p[0] >= -180 && p[0] <= 180, { message: 'longitude must be within [-180, 180] degrees' })
  .refine((p) => p[1] >= -90 && p[1] <= 90, { message: 'latitude must be within [-90, 90] degrees' });

export const pointGeometry = z.object({ type: z.literal('Point'), coordinates: lonLat });
export const lineStringGeometry = z.object({ type: z.literal('LineString'), coordinates: z.array(lonLat).min(2, 'a line needs at least two vertices') });
export const multiLineStringGeometry = z.object({
  type: z.literal('MultiLineString'),
  coordinates: z.array(z.array(lonLat).min(2, 'each line needs at least two vertices')).min(1),
});
const ring = z
  .array(lonLat)
  .min(4, 'a polygon ring needs at least four positions')
  .refine((r) => r[0][0] === r[r.length - 1][0] && r[0][1] === r[r.length - 1][1], { message: 'a polygon ring must be closed (first position = last)' });
export const polygonGeometry = z.object({ type: z.literal('Polygon'), coordinates: z.array(ring).min(1) });
export const multiPolygonGeometry = z.object({ type: z.literal('MultiPolygon'), coordinates: z.array(z.array(ring).min(1)).min(1) });

export type Position = number[];
export interface Feature<G = { type: string; coordinates: unknown }, P = Record<string, unknown>> {
  type: 'Feature';
  id?: string | number;
  geometry: G;
  properties: P;
}
export interface FeatureCollection<G = { type: string; coordinates: unknown }, P = Record<string, unknown>> {
  type: 'FeatureCollection';
  features: Feature<G, P>[];
  [member: string]: unknown;
}

export type PointGeometry = z.infer<typeof pointGeometry>;
export type LineGeometry = z.infer<typeof lineStringGeometry> | z.infer<typeof multiLineStringGeometry>;
export type PolygonGeometry = z.infer<typeof polygonGeometry> | z.infer<typeof multiPolygonGeometry>;

/**
 * The features array of a GeoJSON FeatureCollection (possibly empty), or a `bad_geojson` InputError with `message`
 * and, on the field `type`, `problem`.
 */
export function collectionFeatures(input: unknown, message: string, problem: string): unknown[] {
  const fc = input as { type?: unknown; features?: unknown } | null;
  if (fc === null || typeof fc !== 'object' || fc.type !== 'FeatureCollection' || !Array.isArray(fc.features))
    throw new InputError(message, [{ field: 'type', problem }], 'bad_geojson');
  return fc.features as unknown[];
}
