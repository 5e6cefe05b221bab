/**
 * The model of a run at a point: the run's model, or inside one of its override regions the overridden model (the
 * later region wins where they overlap, as in the run's grids), keyed by the region's label. Used by the column
 * route (on the request thread, cached per run by the regions' content hash) and by sections (on a worker thread).
 */
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { applyLayerOverride, overrideRegionAt, overrideRegions } from '../../shared/products/overrides.ts';

export type ModelAt = (lon: number, lat: number) => { key: string; model: ThermalModelInput; region: string | null };

/** The zone lookup of a base model and an optional regions data set body (GeoJSON text). */
export function modelZones(base: ThermalModelInput, regionsBody: string | null): ModelAt {
  const baseZone = { key: 'model', model: base, region: null };
  if (regionsBody === null) return () => baseZone;
  const { regions } = overrideRegions(parseFeatureCollection('regions', JSON.parse(regionsBody)).collection.features);
  const models = new Map<number, ThermalModelInput>();
  return (lon, lat) => {
    const k = overrideRegionAt(regions, lon, lat);
    if (k < 0) return baseZone;
    let m = models.get(k);
    if (!m) models.set(k, (m = applyLayerOverride(base, regions[k].override)));
    return { key: regions[k].label, model: m, region: regions[k].label };
  };
}
