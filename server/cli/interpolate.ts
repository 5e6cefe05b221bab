import { CAUTION } from '../../shared/caution.ts';
import { targetsFromGeoJson } from '../../shared/schema/targets.ts';
import { loadCrsDefinition } from '../../shared/interp/projection.ts';
import { heatFlowSurface } from '../../shared/products/heat-flow-surface.ts';
import {
  prepareInterpolation,
  predictAtPoints,
  type InterpolationOptions,
  type PreparedInterpolation,
  type InterpolationResult,
} from '../../shared/interp/interpolate.ts';
import { blockEstimates } from '../../shared/interp/blockKriging.ts';
import { parseJson, readText } from './point-input.ts';
import {
  INTERPOLATE_HELP,
  checkChoices,
  errorFieldOption,
  interpolationOptions,
  parseInterpolateArgs,
  workersOption,
  type InterpolateArgs,
} from './interpolate-options.ts';
import { readInterpolationInputs, type InterpolationInputs } from './interpolate-inputs.ts';
import { cvOut, printSurface, surfaceBody, surfaceProvenance, writeSurfaceFiles } from './interpolate-output.ts';

/**
 * `subtherm interpolate`: grids a point field by IDW or ordinary kriging (or predicts at target points with --at),
 * writes the GeoTIFF pair and prints the summary. Options and help: `interpolate-options.ts`; files read:
 * `interpolate-inputs.ts`; files written and text printed: `interpolate-output.ts`.
 */
export async function interpolate(argv: string[]): Promise<number> {
  const t0 = performance.now();
  const a = parseInterpolateArgs(argv);
  if (a.help) {
    process.stdout.write(INTERPOLATE_HELP);
    return 0;
  }
  checkChoices(a);
  const warnings: string[] = [];
  const errorField = errorFieldOption(a, warnings);
  const crs = a.crs ?? 'EPSG:4326';
  const crsDef = await loadCrsDefinition(crs);
  const inputs = await readInterpolationInputs(a, errorField, warnings);
  const options = interpolationOptions(a, inputs, errorField, { crs, crsDef });
  const readMs = performance.now() - t0;
  if (a.at !== undefined) return predictAtTargets(a, a.at, inputs, options, warnings, readMs);

  const workers = workersOption(a.workers);
  const prep = prepareInterpolation(inputs.points, options);
  const result = await griddedSurface(prep, workers);
  const tw = performance.now();
  const files = a.out === undefined ? [] : await writeSurfaceFiles(a.out, a.field, options, result, surfaceProvenance(a.field, options, result, inputs.hashes));
  const body = {
    ...surfaceBody(result, options.units, a.residuals),
    blocks: inputs.blocks === null ? undefined : blockEstimates(prep, inputs.blocks, options.externalDrift),
    files,
    caution: CAUTION,
    warnings: [...warnings, ...result.warnings],
    timingsMs: { read: readMs, ...result.timingsMs, write: performance.now() - tw, total: performance.now() - t0 },
  };
  if (a.json) process.stdout.write(JSON.stringify(body) + '\n');
  else printSurface(a.field, body);
  return 0;
}

/** The surface over the prepared grid, filled on this thread or, with `workers` > 1, on a pool of worker threads. */
async function griddedSurface(prep: PreparedInterpolation, workers: number): Promise<InterpolationResult> {
  if (workers === 1) return heatFlowSurface(prep);
  const { createInterpPool, poolRowFiller, sharedFloat32 } = await import('../workers/interp-worker.ts');
  const pool = createInterpPool(workers);
  try {
    return await heatFlowSurface(prep, { fill: poolRowFiller(pool, prep.plan), allocate: sharedFloat32 });
  } finally {
    await pool.destroy();
  }
}

/** --at: predictions at the target points only (and block estimates with --block), printed as JSON or one line each. */
async function predictAtTargets(
  a: InterpolateArgs,
  atPath: string,
  inputs: InterpolationInputs,
  options: InterpolationOptions,
  warnings: string[],
  readMs: number,
): Promise<number> {
  const targets = targetsFromGeoJson(parseJson(await readText(atPath, 'at'), atPath), atPath);
  const r = predictAtPoints(inputs.points, options, targets);
  const blocks =
    inputs.blocks === null
      ? undefined
      : blockEstimates(prepareInterpolation(inputs.points, { ...options, region: null, crossValidation: false }, false), inputs.blocks, options.externalDrift);
  const body = {
    predictions: r.predictions,
    blocks,
    units: options.units,
    variogram: r.variogram,
    crossValidation: cvOut(r.crossValidation, a.residuals),
    warnings: [...warnings, ...r.warnings],
    timingsMs: { read: readMs, ...r.timingsMs },
  };
  if (a.json) process.stdout.write(JSON.stringify(body) + '\n');
  else for (const p of r.predictions) process.stdout.write(`${p.id}\t${p.value ?? 'no data'}\t${p.sd ?? ''}\n`);
  return 0;
}
