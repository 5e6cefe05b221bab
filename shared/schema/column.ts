/**
 * The one column answer (DESIGN.md §4): what `subtherm geotherm --json` prints and what `POST /api/column` returns,
 * assembled by shared/products/column.ts. Deterministic numbers are rounded to 1e-6; with realizations each
 * uncertain number (isotherm depth, temperature at depth, solidus crossing, basal and reduced heat flow) becomes
 * `{ p10, p50, p90, mean, sd, stderrP50 }` (Hyndman & Fan 1996 type 7; null where a percentile falls among
 * "not reached").
 */
import { z } from 'zod';

const maybe = z.number().nullable();

/** Percentile summary of an uncertain number over the realizations. */
export const uncertainSchema = z.object({ p10: maybe, p50: maybe, p90: maybe, mean: maybe, sd: maybe, stderrP50: maybe });
export type Uncertain = z.infer<typeof uncertainSchema>;

/** A number (null = not reached / undefined), or its summary over the realizations. */
export const maybeUncertainSchema = z.union([maybe, uncertainSchema]);
export type MaybeUncertain = z.infer<typeof maybeUncertainSchema>;

/** Why the column gives no temperature below validToKm (null: valid throughout). */
const endReason = z.enum(['melt-onset', 'heat-flow-exhausted', 'conductivity-undefined', 'bad-input']).nullable();

export const columnPointSchema = z.object({
  depthKm: z.number(),
  temperatureC: maybe,
  heatFlowMWm2: maybe,
  /** Lithostatic pressure. */
  pressureMPa: maybe,
  porePressureMPa: maybe,
  /** λ = pore / lithostatic pressure (Hubbert & Rubey 1959). */
  poreFluidFactor: maybe,
  effectivePressureMPa: maybe,
  /** Metamorphic facies at (T, P), approximate near field boundaries. */
  facies: z.string().nullable(),
  faciesApproximate: z.boolean(),
  /** Conductive geotherm or mantle adiabat (null below the end of the column). */
  regime: z.enum(['conductive', 'adiabat']).nullable(),
  flag: endReason,
});

/** The solidus curve of the layer where a crossing happens. */
const solidusCurveSchema = z.object({ layer: z.string(), rock: z.string(), curve: z.string(), label: z.string(), source: z.string() }).nullable();
export type ColumnPoint = z.infer<typeof columnPointSchema>;

/**
 * A layer of the model the column was computed with (at a run's point, the model of the override region there): its
 * depth range (km; the last layer reaches the bottom of the column), rock kind and that rock's two solidus curves.
 */
export const columnLayerSchema = z.object({
  name: z.string(),
  topKm: z.number(),
  bottomKm: z.number(),
  rock: z.string(),
  /** Ids of the rock's water-saturated and fluid-absent/dry solidus curves (shared/petrology/solidus.ts). */
  wetSolidus: z.string(),
  drySolidus: z.string(),
});
export type ColumnLayer = z.infer<typeof columnLayerSchema>;

export const columnMonteCarloSchema = z.object({
  realizations: z.number().int(),
  seed: z.number().int(),
  /** How the surface heat flow varied between realizations. */
  heatFlow: z.string(),
  rejected: z.number().int(),
  inconsistent: z.number().int(),
  stderrP50Method: z.string(),
  percentiles: z.string(),
  /** Fraction of valid realizations that reached each isotherm within maxDepthKm. */
  isothermReachedFraction: z.record(z.string(), maybe),
  /** P10–P90 of temperature at each profile depth (same order as `profile`), when asked for. */
  profileTemperatureC: z.array(uncertainSchema).nullable(),
});

export const columnAnswerSchema = z.object({
  surfaceHeatFlowMWm2: z.number(),
  heatFlowSdMWm2: maybe,
  surfaceTemperatureC: z.number(),
  isothermDepthsKm: z.record(z.string(), maybeUncertainSchema),
  temperatureAtDepthsC: z.record(z.string(), maybeUncertainSchema),
  profile: z.array(columnPointSchema),
  /** The layers of the model the column was computed with, top down. */
  layers: z.array(columnLayerSchema),
  basalHeatFlowMWm2: maybeUncertainSchema,
  reducedHeatFlowMWm2: maybeUncertainSchema,
  reducedHeatFlowMethod: z.string(),
  /** The layer marked heatProducingUpperCrust that defines the reduced heat flow, or null. */
  reducedHeatFlowLayer: z.string().nullable(),
  /** Water-saturated solidus and melt onset (fluid-absent/dry solidus) of the rock there, km; with realizations also the lithosphere base. */
  solidusCrossingKm: z
    .object({ wetSolidus: maybeUncertainSchema, meltOnset: maybeUncertainSchema, lithosphereBase: maybeUncertainSchema.optional() })
    .describe(
      'depths (km, null = not reached) where the geotherm meets the water-saturated solidus of the rock there (melting if free water is present) and its fluid-absent/dry solidus (melt onset: no temperature is given below); rock-aware, so it replaces the { wetGranite, dryPeridotite } pair of the first design',
    ),
  meltOnsetKm: maybe,
  meltOnset: solidusCurveSchema,
  wetSolidusKm: maybe,
  wetSolidus: solidusCurveSchema,
  lithosphereBaseKm: maybe,
  mantlePotentialTemperatureC: z.number(),
  adiabatAboveDrySolidusToKm: maybe,
  decompressionMelting: z.boolean(),
  validToKm: maybe,
  invalidBelow: endReason,
  porePressure: z.object({ mode: z.string(), method: z.string() }),
  /** Not valid throughout: heat flow exhausted, k(T) undefined, or melt onset above maxDepthKm. */
  inconsistent: z.boolean(),
  monteCarlo: columnMonteCarloSchema.nullable(),
  warnings: z.array(z.string()),
  caution: z.string(),
  version: z.string(),
});
export type ColumnAnswer = z.infer<typeof columnAnswerSchema>;

/** POST /api/column at a point of a run: the column answer, and where it was read. */
export const columnAtRunAnswerSchema = columnAnswerSchema.extend({
  runId: z.string(),
  lon: z.number(),
  lat: z.number(),
  /** The label of the run's region whose layer override applies here, or null for the run's own model. */
  modelRegion: z.string().nullable(),
});
export type ColumnAtRunAnswer = z.infer<typeof columnAtRunAnswerSchema>;
