/**
 * Layers derived from a finished run's realizations (server/runs/uncertainty-layers.ts): the spread of the depth to
 * an isotherm (P90 − P10) and exceedance probabilities. `derivedLayerSpec` names a layer from its query (cheap, on
 * the request thread: the name decides whether the layer is already stored); `renderDerivedLayer` builds the run's
 * realizations from its record, computes the layer and encodes its GeoTIFF and PNG (with the caution and
 * provenance). The rendering runs on a worker thread (server/workers/compute-worker.ts), never the request thread.
 */
import { rampLegend } from '../../shared/grid/colorize.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { EMBER, HAZE } from '../../shared/grid/ramps.ts';
import { buildProvenance } from '../../shared/products/provenance.ts';
import { depthProductName, temperatureProductName } from '../../shared/products/names.ts';
import { layerStats } from '../../shared/products/stats.ts';
import type { Legend, RunLayerInfo } from '../../shared/schema/run.ts';
import { geotiffBytes, pngBytes, sha256Hex } from '../io/export.ts';
import { realizationsFromRecord, type RunRecord } from './realizations.ts';
import { exceedanceProbability, isothermSpreadKm, type ProbabilityQuery } from './uncertainty-layers.ts';

/** What a derived layer asks: the spread of the depth to an isotherm, or a probability. */
export type DerivedLayerQuery = { kind: 'spread'; isothermC: number } | { kind: 'probability'; query: ProbabilityQuery };

/** Name, title, units and method of a derived layer (plain data). */
export interface DerivedLayerSpec {
  name: string;
  title: string;
  units: string;
  method: string;
}

/** A rendered layer: its description as GET /api/runs/:id lists it and its two files. */
export interface DerivedLayerOutput {
  info: RunLayerInfo;
  tif: Uint8Array;
  png: Uint8Array;
}

/** A number as it appears in names and titles (no float noise: 300, 2.5). */
const fmt = (v: number) => String(+v.toPrecision(12));

/** The name, title, units and method of the layer a query asks for. */
export function derivedLayerSpec(q: DerivedLayerQuery): DerivedLayerSpec {
  if (q.kind === 'spread') {
    const T = fmt(q.isothermC);
    return {
      name: `${depthProductName(q.isothermC)}.spread`,
      title: `Depth to the ${T} °C isotherm, spread (P90 − P10)`,
      units: 'km',
      method: `P90 − P10 (Hyndman & Fan type 7) of the depth to the ${T} °C isotherm over the run's realizations; NoData where a percentile is not reached`,
    };
  }
  const p = q.query;
  const title =
    p.kind === 'isotherm-shallower'
      ? `Probability that the ${fmt(p.isothermC)} °C isotherm lies shallower than ${fmt(p.depthKm)} km`
      : `Probability that the temperature at ${fmt(p.depthKm)} km exceeds ${fmt(p.temperatureC)} °C`;
  return {
    name:
      p.kind === 'isotherm-shallower'
        ? `${depthProductName(p.isothermC)}.prob-lt-${fmt(p.depthKm)}km`
        : `${temperatureProductName(p.depthKm)}.prob-gt-${fmt(p.temperatureC)}C`,
    title,
    units: 'probability',
    method: `${title.toLowerCase()}: the fraction of the run's valid realizations where it holds (an isotherm not reached counts as deeper than any depth; invalid columns are left out)`,
  };
}

/** The legend of a derived layer: 0 to the largest spread (km), or 0 to 1 for a probability. */
function legendOf(q: DerivedLayerQuery, values: Float32Array): Legend {
  if (q.kind === 'probability') return rampLegend(EMBER, 'probability', 0, 1);
  const s = layerStats(values);
  return rampLegend(HAZE, 'km', 0, s.max !== null && s.max > 0 ? s.max : 1);
}

/**
 * Builds the run's realizations from its record, computes the layer and encodes its GeoTIFF and PNG. Throws the
 * InputError of realizationsFromRecord for a run without realizations (409) or one this version cannot reproduce.
 */
export async function renderDerivedLayer(record: RunRecord, q: DerivedLayerQuery): Promise<DerivedLayerOutput> {
  const spec = derivedLayerSpec(q);
  const rr = await realizationsFromRecord(record);
  const values = q.kind === 'spread' ? await isothermSpreadKm(rr, q.isothermC) : await exceedanceProbability(rr, q.query);
  const grid: Grid<Float32Array> = { ...rr.grid, units: spec.units, values };
  const summary = (record.summary ?? {}) as { provenance?: { inputs?: Record<string, string> } };
  const provenance = buildProvenance(
    {
      method: `${spec.method}; ${rr.source}`,
      model: record.model,
      inputs: { ...(summary.provenance?.inputs ?? {}), run: record.runId },
      parameters: { layer: spec.name, realizations: rr.count, seed: rr.seed },
    },
    sha256Hex,
  );
  const legend = legendOf(q, values);
  const info: RunLayerInfo = {
    name: spec.name,
    kind: 'raster',
    units: spec.units,
    title: spec.title,
    legend,
    formats: ['tif', 'png'],
    stats: layerStats(values),
  };
  return {
    info,
    tif: geotiffBytes(grid, `${spec.title} (${spec.units})`, provenance),
    png: pngBytes(grid, legend, q.kind === 'spread' ? HAZE : EMBER, provenance, spec.title),
  };
}
