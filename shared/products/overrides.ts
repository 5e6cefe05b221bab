/**
 * Spatial overrides of the thermal model: polygons (a `regions` data set) whose `layers` property changes the model
 * inside them. The rule (this project's own):
 *
 * - `mode: "amend"` (the default): each object of `layers` must have a `name`.
 *   - A name equal to a layer of the base model (compared trimmed and case-insensitively) amends that layer: every
 *     field given replaces the base value; a field given as `null` removes an optional field (e.g.
 *     `"heatProductionDecayKm": null` makes the heat production constant in the layer). Fields not given are kept.
 *   - A new name inserts a new layer, which must be complete (bottomKm, conductivityWmK, heat production). It goes
 *     where its bottomKm falls: it ends at its own bottomKm and starts at the bottom of the layer above, so the layer
 *     it cuts into now starts at the new layer's bottom (e.g. `{ "name": "basin fill", "bottomKm": 3, … }` puts
 *     3 km of basin fill on top of the upper crust). A bottomKm equal to an existing layer's is an error.
 * - `mode: "replace"`: `layers` is the whole new stack (complete layers, increasing bottomKm).
 *
 * The surface temperature and surface heat flow stay the base model's. Each resulting model is validated like any
 * model (shared/schema/model.ts); a problem names the region (index and id) and the layer.
 */
import { InputError, type InputProblem } from '../errors.ts';
import { parseThermalModel, type ThermalModelInput } from '../schema/model.ts';
import { pointInRings, rasterizeZones, ringsOfGeometry, type Rings } from '../grid/polygon-cells.ts';
import type { GridSpec } from '../grid/grid.ts';
import { converter, WGS84_DEF } from '../interp/projection.ts';

export interface LayerOverride {
  /** Region label for messages, e.g. `regions[2] (basin)`. */
  label: string;
  mode: 'amend' | 'replace';
  layers: Record<string, unknown>[];
}

const norm = (s: string) => s.trim().toLowerCase();

/** Reads the override of one region feature's properties; null when it has no `layers`. */
export function overrideFromProperties(props: Record<string, unknown> | null | undefined, label: string): LayerOverride | null {
  const layers = props?.layers;
  if (layers === undefined || layers === null) return null;
  if (!Array.isArray(layers) || layers.length === 0 || layers.some((l) => l === null || typeof l !== 'object' || Array.isArray(l))) {
    throw new InputError(
      `${label}: "layers" must be a non-empty array of layer objects`,
      [{ feature: label, field: 'layers', problem: 'expected [{ "name": ..., ... }, ...]' }],
      'invalid_override',
    );
  }
  const mode = props?.mode ?? 'amend';
  if (mode !== 'amend' && mode !== 'replace') {
    throw new InputError(
      `${label}: "mode" must be "amend" or "replace", got ${JSON.stringify(mode)}`,
      [{ feature: label, field: 'mode', problem: 'expected "amend" (default) or "replace"' }],
      'invalid_override',
    );
  }
  return { label, mode, layers: layers as Record<string, unknown>[] };
}

/**
 * The model inside a region: the base model with the override applied by the rule above, validated.
 * Distributions in either survive (each is a plain JSON value here).
 */
export function applyLayerOverride(base: ThermalModelInput, o: LayerOverride): ThermalModelInput {
  let layers: Record<string, unknown>[];
  if (o.mode === 'replace') {
    layers = o.layers.map((l) => stripNulls({ ...l }));
  } else {
    layers = base.layers.map((l) => ({ ...l }));
    const problems: InputProblem[] = [];
    o.layers.forEach((ol, i) => {
      const name = ol.name;
      if (typeof name !== 'string' || name.trim() === '') {
        problems.push({
          feature: o.label,
          field: `layers[${i}].name`,
          problem: 'each override layer needs a name (to amend the layer of that name, or to insert a new one)',
        });
        return;
      }
      const at = layers.findIndex((l) => typeof l.name === 'string' && norm(l.name) === norm(name));
      if (at >= 0) {
        const merged: Record<string, unknown> = { ...layers[at] };
        for (const [k, v] of Object.entries(ol)) {
          if (k === 'name') continue;
          if (v === null) delete merged[k];
          else merged[k] = v;
        }
        layers[at] = merged;
        return;
      }
      const bottom = ol.bottomKm;
      if (typeof bottom !== 'number' || !Number.isFinite(bottom)) {
        problems.push({
          feature: o.label,
          field: `layers[${i}].bottomKm`,
          problem: `"${name}" is not a layer of the model, so it is inserted and needs a bottomKm`,
        });
        return;
      }
      if (layers.some((l) => l.bottomKm === bottom)) {
        problems.push({
          feature: o.label,
          field: `layers[${i}].bottomKm`,
          problem: `a layer of the model already ends at ${bottom} km: amend it by name instead`,
        });
        return;
      }
      const pos = layers.findIndex((l) => typeof l.bottomKm === 'number' && l.bottomKm > bottom);
      const layer = stripNulls({ ...ol });
      if (pos < 0) layers.push(layer);
      else layers.splice(pos, 0, layer);
    });
    if (problems.length > 0) throw new InputError(`${o.label}: ${problems.map((p) => `${p.field}: ${p.problem}`).join('; ')}`, problems, 'invalid_override');
  }
  const candidate: Record<string, unknown> = { surfaceTemperatureC: base.surfaceTemperatureC, layers };
  if (base.surfaceHeatFlowMWm2 !== undefined) candidate.surfaceHeatFlowMWm2 = base.surfaceHeatFlowMWm2;
  try {
    return parseThermalModel(candidate, `${o.label} (model with its layer override)`);
  } catch (e) {
    if (e instanceof InputError)
      throw new InputError(
        e.message,
        e.details.map((d) => ({ ...d, feature: `${o.label}: ${d.feature ?? 'model'}` })),
        'invalid_override',
      );
    throw e;
  }
}

function stripNulls(l: Record<string, unknown>): Record<string, unknown> {
  for (const k of Object.keys(l)) if (l[k] === null) delete l[k];
  return l;
}

/** An override region of a regions data set: its label, its override and its rings in lon/lat. */
export interface OverrideRegion {
  label: string;
  override: LayerOverride;
  ringsLonLat: Rings;
}

/**
 * The override regions of a validated regions collection, in order, with their labels (`regions[i] (id)`); the
 * features without `layers` are returned apart (a mask candidate).
 */
export function overrideRegions(features: { geometry: unknown; properties?: Record<string, unknown> | null }[]): { regions: OverrideRegion[]; plain: Rings[] } {
  const regions: OverrideRegion[] = [];
  const plain: Rings[] = [];
  features.forEach((f, i) => {
    const props = f.properties ?? {};
    const label = `regions[${i}]${props.id !== undefined ? ` (${String(props.id)})` : ''}`;
    const o = overrideFromProperties(props, label);
    const rings = ringsOfGeometry(f.geometry as { type: string; coordinates: unknown });
    if (o !== null) regions.push({ label, override: o, ringsLonLat: rings });
    else plain.push(rings);
  });
  return { regions, plain };
}

/**
 * Index of the override region containing a lon/lat point, or −1: where regions overlap the later one wins, as in
 * the zone raster of the grids (shared/grid/polygon-cells.ts rasterizeZones), so a column and its grid cell agree.
 */
export function overrideRegionAt(regions: readonly OverrideRegion[], lon: number, lat: number): number {
  for (let k = regions.length - 1; k >= 0; k--) if (pointInRings(regions[k].ringsLonLat, lon, lat)) return k;
  return -1;
}

/**
 * Each cell's zone on a grid in the CRS `crsDef` (a proj4 definition): 0 outside every region, k inside region k
 * (the first that holds the cell centre), the regions' lon/lat rings projected into the grid's CRS.
 */
export function regionZones(grid: GridSpec, regions: readonly OverrideRegion[], crsDef: string): Uint16Array {
  const c = crsDef === WGS84_DEF ? null : converter(WGS84_DEF, crsDef);
  return rasterizeZones(
    grid,
    regions.map((r) => (c === null ? r.ringsLonLat : r.ringsLonLat.map((ring) => ring.map((p) => c.forward([p[0], p[1]]))))),
  );
}
