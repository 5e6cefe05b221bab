/**
 * What `subtherm interpolate` writes and prints: the GeoTIFF pair with its provenance, and the grid summary as one
 * JSON object or as text lines ending with the caution.
 */
import { cellSizeText } from '../../shared/geodesy/ground-cell.ts';
import { VERSION, TOOL_NAME } from '../../shared/version.ts';
import { CAUTION } from '../../shared/caution.ts';
import { gridSummary, type InterpolationOptions, type InterpolationResult } from '../../shared/interp/interpolate.ts';
import { writeGeoTiffFile } from '../io/geotiff.ts';

/** The method's name for file descriptions: IDW, ordinary kriging, or universal kriging with its drift. */
export function krigingName(method: 'idw' | 'kriging', result: Pick<InterpolationResult, 'variogram'>): string {
  if (method === 'idw') return 'inverse-distance weighting';
  const kind = result.variogram?.trend?.kind ?? 'none';
  if (kind === 'external') return `kriging with an external drift (${result.variogram?.trend?.ols?.covariate?.name ?? 'covariate grid'})`;
  return kind === 'none' ? 'ordinary kriging' : `universal kriging (${kind} drift)`;
}

/** Cross-validation for output: the residual list only with --residuals (it can be long). */
export function cvOut(cv: InterpolationResult['crossValidation'], residuals: boolean) {
  if (cv === null) return null;
  return residuals ? cv : { ...cv, residuals: undefined, residualsOmitted: cv.residuals.length };
}

/** What the written grids record about how they were made. */
export function surfaceProvenance(field: string, options: InterpolationOptions, result: InterpolationResult, hashes: Record<string, string>) {
  const v = result.variogram;
  return {
    tool: TOOL_NAME,
    version: VERSION,
    verb: 'interpolate',
    method: options.method,
    field,
    units: options.units,
    variogram: v === null ? null : { model: v.model, nugget: v.nugget, partialSill: v.partialSill, rangeKm: v.rangeKm, anisotropy: v.anisotropy },
    trend: v?.trend === undefined ? null : { kind: v.trend.kind, selectedBy: v.trend.selectedBy, ols: v.trend.ols },
    neighbors: options.neighbors ?? (options.method === 'idw' ? 12 : 16),
    power: options.method === 'idw' ? (options.power ?? 2) : undefined,
    inputSha256: hashes,
    created: new Date().toISOString(),
  };
}

/** Writes the surface to `name` and, for kriging with an sd grid, its standard deviation beside it; the names written. */
export async function writeSurfaceFiles(
  name: string,
  field: string,
  options: InterpolationOptions,
  result: InterpolationResult,
  provenance: ReturnType<typeof surfaceProvenance>,
): Promise<string[]> {
  await writeGeoTiffFile(name, result.grid, {
    description: `${field} (${options.units || 'value'}), ${krigingName(options.method, result)}`,
    metadata: provenance,
  });
  const files = [name];
  if (result.sd !== undefined) {
    const sdName = name.replace(/\.tiff?$/i, '') + '.sd.tif';
    await writeGeoTiffFile(sdName, result.sd, { description: `${field} kriging standard deviation (${options.units || 'value units'})`, metadata: provenance });
    files.push(sdName);
  }
  return files;
}

/** The grid summary, the sd range, the variogram and cross-validation of a gridded surface. */
export function surfaceBody(result: InterpolationResult, units: string | undefined, residuals: boolean) {
  return {
    grid: { ...gridSummary(result.grid, result.cellKm), groundCellKmRange: result.groundCellKmRange, units },
    sd: result.sd !== undefined ? (({ min, max, mean }) => ({ min, max, mean }))(gridSummary(result.sd, result.cellKm)) : null,
    variogram: result.variogram,
    crossValidation: cvOut(result.crossValidation, residuals),
  };
}

/** The text form of the answer: grid, variogram, cross-validation, files written, warnings and the caution. */
export function printSurface(field: string, body: ReturnType<typeof surfaceBody> & { files: string[]; warnings: string[] }): void {
  const g = body.grid;
  const out = (line: string) => process.stdout.write(line + '\n');
  out(
    `grid ${g.nx} × ${g.ny} (${cellSizeText(g.cellKm, g.groundCellKmRange)} cells on the ground, ${g.crs}); ${field} min ${g.min} max ${g.max} mean ${g.mean}; ${g.noData} no-data cells`,
  );
  const v = body.variogram;
  if (v) out(`variogram ${v.model}: nugget ${v.nugget}, partial sill ${v.partialSill}, range ${v.rangeKm} km`);
  const a = v?.anisotropyEstimate;
  if (a)
    out(
      `anisotropy estimated: major axis ${a.angleDeg.toFixed(1)}° from north, ratio ${a.ratio.toFixed(3)} (${a.used ? 'used' : 'not used'}: leave-one-out RMSE ${a.cvRmse.anisotropic.toPrecision(4)} against ${a.cvRmse.isotropic.toPrecision(4)} isotropic)`,
    );
  const t = v?.trend;
  if (t) {
    const side = (t.candidates ?? []).map((c) => `${c.kind} ${c.cvRmse === null ? `(${c.problem})` : `RMSE ${c.cvRmse.toPrecision(4)}`}`).join(', ');
    out(`trend ${t.kind} (${t.selectedBy === 'cross-validation' ? `auto, by leave-one-out RMSE: ${side}` : 'given'})`);
  }
  const cv = body.crossValidation;
  if (cv) out(`cross-validation: RMSE ${cv.rmse}, mean error ${cv.meanError}, MSDR ${cv.meanSquaredDeviationRatio ?? '-'}`);
  for (const f of body.files) out(`wrote ${f}`);
  for (const w of body.warnings) out(`warning: ${w}`);
  out(CAUTION);
}
