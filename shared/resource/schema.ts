/**
 * The heat-in-place request contract (validated at the boundary: CLI and HTTP). Defaults: 3–7 km and Tmin 150 °C
 * (project choices); Tref 15 °C, ρC 2.7 MJ/m³/K, Rg 0.1, ηu 0.4, 30 years (typical values, docs/sources.md#heat-in-place).
 * ρC, the recovery factor and the efficiencies may be numbers or distributions (the thermal model's syntax).
 */
import { z } from 'zod';
import { InputError, type InputProblem } from '../errors.ts';
import { multiPolygonGeometry, polygonGeometry } from '../schema/geojson.ts';
import { checkedRange, uncertainNumberSchema, type UncertainNumber } from '../schema/model.ts';

const finite = z.number({ error: 'expected a finite number' });

export const heatInPlaceOptionsSchema = z
  .object({
    minTempC: finite.default(150),
    topKm: finite.min(0, 'topKm must be ≥ 0').default(3),
    bottomKm: finite.max(100, 'bottomKm must be ≤ 100 km').default(7),
    refTempC: finite.gt(-273.15, 'refTempC must be above absolute zero').default(15),
    rhoCMJm3K: uncertainNumberSchema.default(2.7),
    recoveryFactor: uncertainNumberSchema.default(0.1),
    utilizationEfficiency: uncertainNumberSchema.default(0.4),
    conversionEfficiency: uncertainNumberSchema.optional(),
    lifeYears: finite.gt(0, 'lifeYears must be > 0').max(1000).default(30),
    realizations: z.number().int('realizations must be an integer').min(0).max(100_000).default(0),
    seed: z.number().int('seed must be an integer').default(1),
    heatFlowErrorCorrelation: z.enum(['full', 'independent']).default('full'),
  })
  .strict();

export type HeatInPlaceOptions = z.output<typeof heatInPlaceOptionsSchema>;
export type HeatInPlaceOptionsInput = z.input<typeof heatInPlaceOptionsSchema>;

/** Range checks zod's shapes cannot express (bottom > top, fractions in (0, 1], Tmin ≥ Tref). */
export function checkHeatInPlaceOptions(o: HeatInPlaceOptions): InputProblem[] {
  const out: InputProblem[] = [];
  if (!(o.bottomKm > o.topKm)) out.push({ field: 'bottomKm', problem: `must be greater than topKm (${o.topKm} km), got ${o.bottomKm}` });
  if (!(o.minTempC >= o.refTempC)) out.push({ field: 'minTempC', problem: `must be ≥ refTempC (${o.refTempC} °C), got ${o.minTempC}` });
  const frac = (field: string, v: UncertainNumber | undefined) => {
    if (v === undefined) return;
    const [lo, hi] = checkedRange(v);
    if (!(lo > 0 && hi <= 1))
      out.push({ field, problem: `must lie in (0, 1]${typeof v === 'number' ? `, got ${v}` : `, got a distribution over [${lo}, ${hi}]`}` });
  };
  frac('recoveryFactor', o.recoveryFactor);
  frac('utilizationEfficiency', o.utilizationEfficiency);
  frac('conversionEfficiency', o.conversionEfficiency);
  const [rlo] = checkedRange(o.rhoCMJm3K);
  if (!(rlo > 0)) out.push({ field: 'rhoCMJm3K', problem: `must be > 0 MJ/m³/K, got ${rlo}` });
  return out;
}

/** Validates heat-in-place options; throws InputError naming each field. */
export function parseHeatInPlaceOptions(raw: unknown, source = 'options'): HeatInPlaceOptions {
  const r = heatInPlaceOptionsSchema.safeParse(raw ?? {});
  if (!r.success) {
    const details = r.error.issues.map((i) => ({ field: i.path.map(String).join('.') || '(root)', problem: i.message }));
    throw new InputError(`${source}: ${details.map((d) => `${d.field}: ${d.problem}`).join('; ')}`, details, 'invalid_options');
  }
  const problems = checkHeatInPlaceOptions(r.data);
  if (problems.length > 0) throw new InputError(`${source}: ${problems.map((d) => `${d.field}: ${d.problem}`).join('; ')}`, problems, 'invalid_options');
  return r.data;
}

export type AreaGeometry = { type: 'Polygon'; coordinates: number[][][] } | { type: 'MultiPolygon'; coordinates: number[][][][] };

const areaGeometry = z.union([polygonGeometry, multiPolygonGeometry]);

/**
 * An area polygon from GeoJSON: a Polygon or MultiPolygon geometry, a Feature holding one, or a FeatureCollection
 * of them (their union). Throws InputError naming the feature.
 */
export function parseAreaPolygon(raw: unknown, source = 'polygon'): AreaGeometry {
  const fail = (problem: string, feature?: number | string): never => {
    throw new InputError(
      `${source}: ${feature !== undefined ? `feature ${feature}: ` : ''}${problem}`,
      [{ feature, field: 'geometry', problem }],
      'invalid_polygon',
    );
  };
  const geom = (g: unknown, feature?: number | string): AreaGeometry => {
    const r = areaGeometry.safeParse(g);
    if (!r.success) fail(`expected a Polygon or MultiPolygon geometry: ${r.error.issues.map((i) => `${i.path.join('.')} ${i.message}`).join('; ')}`, feature);
    return r.data as AreaGeometry;
  };
  const o = raw as { type?: unknown; geometry?: unknown; features?: unknown; id?: unknown } | null;
  if (o === null || typeof o !== 'object') return fail('expected a GeoJSON object');
  if (o.type === 'Feature') return geom(o.geometry, typeof o.id === 'string' || typeof o.id === 'number' ? o.id : 0);
  if (o.type === 'FeatureCollection') {
    if (!Array.isArray(o.features) || o.features.length === 0) return fail('the FeatureCollection has no features');
    const polys: number[][][][] = [];
    (o.features as { geometry?: unknown; id?: unknown }[]).forEach((f, i) => {
      const g = geom(f?.geometry, typeof f?.id === 'string' || typeof f?.id === 'number' ? f.id : i);
      if (g.type === 'Polygon') polys.push(g.coordinates);
      else polys.push(...g.coordinates);
    });
    return polys.length === 1 ? { type: 'Polygon', coordinates: polys[0] } : { type: 'MultiPolygon', coordinates: polys };
  }
  return geom(o);
}

/** Region polygons for per-zone totals: each feature of a FeatureCollection, named by `property` (or its id, or its index). */
export function parseZonePolygons(raw: unknown, property: string | undefined, source = 'zones'): { name: string; geometry: AreaGeometry }[] {
  const o = raw as { type?: unknown; features?: unknown } | null;
  if (o === null || typeof o !== 'object' || o.type !== 'FeatureCollection' || !Array.isArray(o.features) || o.features.length === 0) {
    throw new InputError(
      `${source}: expected a GeoJSON FeatureCollection of region polygons`,
      [{ field: 'zones', problem: 'expected a FeatureCollection with at least one Polygon/MultiPolygon feature' }],
      'invalid_zones',
    );
  }
  return (o.features as { id?: unknown; properties?: Record<string, unknown> | null; geometry?: unknown }[]).map((f, i) => {
    const geometry = parseAreaPolygon({ type: 'Feature', id: i, geometry: f?.geometry }, source);
    const p = property !== undefined ? f?.properties?.[property] : undefined;
    if (property !== undefined && (p === undefined || p === null))
      throw new InputError(
        `${source}: feature ${i}: no property "${property}"`,
        [{ feature: i, field: property, problem: 'missing: every region needs a name' }],
        'invalid_zones',
      );
    const name = p !== undefined && p !== null ? String(p) : f?.id !== undefined ? String(f.id) : `zone ${i + 1}`;
    return { name, geometry };
  });
}
