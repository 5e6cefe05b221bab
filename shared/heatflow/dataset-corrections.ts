/**
 * Heat-flow corrections applied to a whole data set (the web's data-set action, POST
 * /api/projects/:id/datasets/:dsId/corrections): a sites data set gets the paleoclimatic and topographic corrections
 * (sites.ts); a wells data set is analysed into heat-flow sites (shared/wells) with a BHT method and the same
 * corrections. The result is a new sites collection whose every corrected site keeps the raw value and the size of
 * each correction in its properties, and one report per site or well.
 */
import { z } from 'zod';
import { InputError, type InputProblem } from '../errors.ts';
import type { Grid } from '../grid/grid.ts';
import { parseFeatureCollection } from '../schema/features.ts';
import { parseThermalModel } from '../schema/model.ts';
import { compileModel, isUncertainModel, nominalModel } from '../thermal/index.ts';
import { analyzeWells, wellCorrectionReports } from '../wells/analyze-all.ts';
import type { WellAnalysisOptions } from '../wells/analyze.ts';
import { readWells } from '../wells/checks.ts';
import { wellModelFromCompiled } from '../wells/model-adapter.ts';
import { EMPIRICAL_BHT } from './bht-empirical.ts';
import { correctionMethodText, type HeatFlowCorrectionOptions } from './corrections.ts';
import { checkClimateHistory, DEFAULT_DIFFUSIVITY_M2S } from './paleoclimate.ts';
import { correctSites, type SiteCorrectionReport } from './sites.ts';
import { DEFAULT_LAPSE_RATE_C_PER_KM } from './topography.ts';

const datasetId = z
  .string()
  .min(1)
  .max(100)
  .regex(/^[A-Za-z0-9_-]+$/, 'a data set id has letters, digits, _ and - only');

/** BHT corrections for BHTs that cannot be Horner-extrapolated (shared/wells/types.ts BhtCorrection). */
const bhtSchema = z.discriminatedUnion('method', [
  z.strictObject({ method: z.literal('none'), sdC: z.number().gt(0).optional() }),
  z.strictObject({
    method: z.literal('offset'),
    offsetC: z.number().gt(-100).lt(100),
    sdC: z.number().gt(0).optional(),
    source: z.string().max(500).optional(),
  }),
  z.strictObject({
    method: z.literal('poly'),
    coefficients: z.array(z.number()).min(1).max(6),
    source: z.string().trim().min(1, 'name where the polynomial comes from').max(500),
    sdC: z.number().gt(0).optional(),
  }),
  z.strictObject({ method: z.enum(['harrison1983', 'waples2004']), sdC: z.number().gt(0).optional() }),
]);

/**
 * The body of the corrections action. `paleoclimate`: surface-temperature steps (yearsAgo > 0, deltaC °C, warming
 * positive) and κ (m²/s); `topography`: the lapse rate (°C/km) and the radius of terrain used (km) — the terrain is
 * the project's own; wells only: `bht`, `surfaceTemperatureC` (°C), `conductivityWmK` (W/m/K) and `model` (the id
 * of one of the project's thermal-model data sets). `name` names the new sites data set.
 */
export const heatFlowCorrectionRequestSchema = z.strictObject({
  name: z.string().trim().min(1).max(200).optional(),
  paleoclimate: z
    .strictObject({
      steps: z
        .array(z.strictObject({ yearsAgo: z.number().gt(0, 'yearsAgo must be > 0').max(1e8), deltaC: z.number().gt(-100).lt(100) }))
        .min(1)
        .max(100),
      diffusivityM2s: z.number().gt(0).max(1e-4).default(DEFAULT_DIFFUSIVITY_M2S),
    })
    .optional(),
  topography: z
    .strictObject({ lapseRateCPerKm: z.number().min(0).max(20).default(DEFAULT_LAPSE_RATE_C_PER_KM), radiusKm: z.number().gt(0).max(500).optional() })
    .optional(),
  bht: bhtSchema.optional(),
  surfaceTemperatureC: z.number().gt(-50).lt(60).optional(),
  conductivityWmK: z.number().gt(0).lt(20).optional(),
  model: datasetId.optional(),
});
export type HeatFlowCorrectionRequest = z.output<typeof heatFlowCorrectionRequestSchema>;

/** What the action made: the corrected sites, a report per site or well, warnings and the methods used. */
export interface DatasetCorrectionResult {
  features: { type: 'Feature'; geometry: { type: 'Point'; coordinates: number[] }; properties: Record<string, unknown> }[];
  reports: SiteCorrectionReport[];
  warnings: string[];
  method: string;
}

const WELL_ONLY = ['bht', 'surfaceTemperatureC', 'conductivityWmK', 'model'] as const;

/** The correction options of a request, with the terrain (a lon/lat DEM, metres) when topography is asked for. */
export function correctionOptionsOf(req: HeatFlowCorrectionRequest, dem: Grid<Float32Array | Float64Array> | null): HeatFlowCorrectionOptions {
  const out: HeatFlowCorrectionOptions = {};
  if (req.paleoclimate) {
    try {
      checkClimateHistory(req.paleoclimate.steps, req.paleoclimate.diffusivityM2s);
    } catch (e) {
      throw new InputError(`paleoclimate: ${(e as Error).message}`, [{ field: 'paleoclimate', problem: (e as Error).message }], 'invalid_request');
    }
    out.paleoclimate = { steps: req.paleoclimate.steps, diffusivityM2s: req.paleoclimate.diffusivityM2s };
  }
  if (req.topography) {
    if (dem === null) throw new InputError('topography needs the project terrain', [{ field: 'topography', problem: 'no terrain' }], 'terrain_not_found');
    out.topography = { dem, lapseRateCPerKm: req.topography.lapseRateCPerKm, radiusKm: req.topography.radiusKm };
  }
  return out;
}

/** The wells analysis options of a request; `modelJson` is the stored body of the named thermal-model data set. */
function wellOptionsOf(req: HeatFlowCorrectionRequest, corrections: HeatFlowCorrectionOptions, modelJson: unknown, warnings: string[]): WellAnalysisOptions {
  const opts: WellAnalysisOptions = { bht: req.bht ?? { method: 'none' }, conductivityWmK: req.conductivityWmK };
  if (modelJson !== undefined) {
    const m = parseThermalModel(modelJson, `model ${req.model}`);
    if (isUncertainModel(m)) warnings.push(`model ${req.model} has distributions; its nominal values are used (means, modes, midpoints)`);
    const cm = compileModel(nominalModel(m));
    opts.model = wellModelFromCompiled(cm, req.surfaceTemperatureC);
    opts.surfaceTemperatureC = req.surfaceTemperatureC ?? cm.surfaceTemperatureC;
  } else opts.surfaceTemperatureC = req.surfaceTemperatureC;
  opts.anchor = opts.surfaceTemperatureC !== undefined;
  if (opts.surfaceTemperatureC === undefined)
    warnings.push('no surface temperature (surfaceTemperatureC or a model): the fits are not anchored at the surface');
  if (opts.bht?.method === 'waples2004' && opts.surfaceTemperatureC === undefined)
    warnings.push('bht waples2004 needs a surface temperature (surfaceTemperatureC or a model); BHTs stay uncorrected');
  if (corrections.paleoclimate || corrections.topography) opts.heatFlowCorrections = corrections;
  return opts;
}

/** Text of the BHT method of a request (for the report's method line). */
function bhtMethodText(req: HeatFlowCorrectionRequest): string {
  const c = req.bht ?? { method: 'none' as const };
  const rest =
    c.method === 'none'
      ? 'uncorrected'
      : c.method === 'offset'
        ? `offset ${c.offsetC} °C${c.source ? ` (${c.source})` : ''}`
        : c.method === 'poly'
          ? `polynomial ΔT = Σ aᵢ·zKmⁱ, a = [${c.coefficients.join(', ')}] (${c.source})`
          : EMPIRICAL_BHT[c.method].source;
  return `BHT: Horner extrapolation for ≥ 3 timed BHTs at one depth; otherwise ${rest}`;
}

/** Corrects a sites data set; 422 when no site gives what a correction needs. */
function correctSitesDataset(features: unknown[], opts: HeatFlowCorrectionOptions): DatasetCorrectionResult {
  const { features: out, reports } = correctSites(features as Parameters<typeof correctSites>[0], opts);
  const warnings: string[] = [];
  for (const r of reports) if (r.status !== 'corrected') warnings.push(`site ${r.id}: not corrected: ${r.reason}`);
  for (const r of reports) for (const n of r.interval?.notes ?? []) warnings.push(`site ${r.id}: ${n}`);
  if (!reports.some((r) => r.status === 'corrected'))
    throw new InputError(
      'no site of this data set can be corrected: a site needs intervalTopM and intervalBottomM (m below ground) and gradientCPerKm or conductivityWmK',
      [{ field: 'intervalTopM', problem: `none of ${reports.length} sites gives its interval; first: ${reports[0]?.reason ?? 'no sites'}` }],
      'nothing_to_correct',
    );
  return { features: out as DatasetCorrectionResult['features'], reports, warnings, method: correctionMethodText(opts) };
}

/** Analyses a wells data set into corrected sites; 422 when no well gives a heat flow. */
function correctWellsDataset(
  features: unknown[],
  req: HeatFlowCorrectionRequest,
  opts: HeatFlowCorrectionOptions,
  modelJson: unknown,
): DatasetCorrectionResult {
  const warnings: string[] = [];
  const wellOpts = wellOptionsOf(req, opts, modelJson, warnings);
  const result = analyzeWells(readWells(features as Parameters<typeof readWells>[0]), wellOpts);
  warnings.push(...result.warnings);
  if (result.sites.features.length === 0)
    throw new InputError(
      'no well of this data set gives a heat flow',
      [{ field: 'measurements', problem: warnings[0] ?? 'no usable wells' }],
      'nothing_to_correct',
    );
  const method = [bhtMethodText(req), correctionMethodText(opts)].filter((s) => s !== '').join('; ');
  return {
    features: result.sites.features as unknown as DatasetCorrectionResult['features'],
    reports: wellCorrectionReports(result.reports),
    warnings,
    method,
  };
}

/**
 * Applies a corrections request to the features of a sites or wells data set (the terrain a lon/lat DEM or null;
 * `modelJson` the body of the request's model data set). Throws an InputError naming the field for options that do
 * not apply to the kind, and when nothing can be corrected. The output is checked as a valid sites collection.
 */
export function correctDataset(
  kind: 'sites' | 'wells',
  features: unknown[],
  req: HeatFlowCorrectionRequest,
  dem: Grid<Float32Array | Float64Array> | null,
  modelJson?: unknown,
): DatasetCorrectionResult {
  if (kind === 'sites') {
    const wrong: InputProblem[] = WELL_ONLY.filter((k) => req[k] !== undefined).map((k) => ({ field: k, problem: 'applies to wells data sets only' }));
    if (wrong.length > 0) throw new InputError(`${wrong.map((w) => w.field).join(', ')}: for wells data sets only`, wrong, 'invalid_request');
    if (!req.paleoclimate && !req.topography)
      throw new InputError('ask for paleoclimate and/or topography', [{ field: 'paleoclimate', problem: 'no correction asked for' }], 'invalid_request');
  }
  const opts = correctionOptionsOf(req, dem);
  const out = kind === 'sites' ? correctSitesDataset(features, opts) : correctWellsDataset(features, req, opts, modelJson);
  parseFeatureCollection('sites', { type: 'FeatureCollection', features: out.features });
  return out;
}
