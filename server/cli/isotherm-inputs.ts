/**
 * The inputs of `subtherm isotherms` (server/cli/isotherms.ts): the user's grid GeoTIFFs (heat flow and its sd),
 * and the heat-flow realizations of its Monte Carlo, simulated from sites (--points) or read from a file
 * (--realizations-from).
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { loadCrsDefinition } from '../../shared/interp/projection.ts';
import { readGeoTiff } from '../io/geotiff.ts';
import { heatFlowSimulationOptions, readSimulationPoints, type SimulationArgs } from './simulation-input.ts';
import { simulateRunHeatFlow } from '../runs/heat-flow-simulation.ts';
import { trendOption } from './drift-input.ts';
import { readRealizationsFile } from './realizations-file.ts';
import { sha256Hex } from '../io/export.ts';
import type { IsothermArgs } from './isotherm-options.ts';

export async function readBytes(path: string, what: string): Promise<Buffer> {
  try {
    return await readFile(path);
  } catch (e) {
    throw new InputError(`cannot read ${what} file ${path}`, [{ field: what, problem: (e as NodeJS.ErrnoException).code ?? String(e) }], 'file_not_found');
  }
}

/**
 * Reads a user's grid GeoTIFF (EPSG:4326 or a projected CRS given by an EPSG code, definitions offline from
 * epsg-index). Errors (InputError): not a TIFF, no georeferencing, several bands without `band`, a band out of
 * range, no EPSG code, or an EPSG code with no offline definition. `band` is 1-based (GDAL's numbering).
 */
export async function readGridGeoTiff(
  bytes: Uint8Array,
  source: string,
  band?: number,
): Promise<{ grid: Grid<Float32Array>; crsDef: string; metadata: Record<string, unknown> }> {
  if (band !== undefined && !(Number.isInteger(band) && band >= 1))
    throw new InputError(
      `${source}: --band ${band} is out of range`,
      [{ feature: source, field: 'band', problem: 'expected a band number from 1' }],
      'bad_option',
    );
  const r = await readGeoTiff(bytes, { band: band === undefined ? undefined : band - 1, source, chooseBand: true });
  let crsDef: string;
  try {
    crsDef = await loadCrsDefinition(r.grid.crs);
  } catch (e) {
    throw new InputError(
      `${source}: unknown CRS ${r.grid.crs}`,
      [{ feature: source, field: 'crs', problem: e instanceof Error ? e.message : String(e) }],
      'bad_crs',
    );
  }
  return { grid: r.grid, crsDef, metadata: r.metadata };
}

export function sameGrid(a: Grid<Float32Array>, b: Grid<Float32Array>): boolean {
  const close = (x: number, y: number) => Math.abs(x - y) <= 1e-9 * Math.max(1, Math.abs(x), Math.abs(y));
  return (
    a.width === b.width &&
    a.height === b.height &&
    a.crs === b.crs &&
    close(a.west, b.west) &&
    close(a.north, b.north) &&
    close(a.dx, b.dx) &&
    close(a.dy, b.dy)
  );
}

/** The error of a file that is not on the heat-flow grid. */
function offGrid(path: string, heatFlow: Grid<Float32Array>, code: string): InputError {
  const problem = `expected ${heatFlow.width} × ${heatFlow.height} cells at ${heatFlow.west}, ${heatFlow.north} in ${heatFlow.crs}`;
  return new InputError(`${path} is not on the heat-flow grid (size, origin, cell size and CRS must match)`, [{ feature: path, field: 'grid', problem }], code);
}

/**
 * Conditional simulations of the sites (--points and the shared simulation flags) on the heat-flow grid, a web
 * run's way (server/runs/heat-flow-simulation.ts): streams keyed by seed + 2³² (the model draws use the seed
 * itself); cells without heat flow stay no data.
 */
export async function simulateOnHeatFlowGrid(
  a: SimulationArgs,
  heatFlow: Grid<Float32Array>,
  crsDef: string,
  realizations: number,
  seed: number,
): Promise<{ values: Float32Array; source: string; sha256: string; driftSha256: string | null; warnings: string[] }> {
  if ((a.field ?? 'heatFlowMWm2') !== 'heatFlowMWm2')
    throw new InputError('isotherms simulates heatFlowMWm2 (mW/m²)', [{ field: 'field', problem: 'expected heatFlowMWm2' }], 'bad_option');
  const { points, warnings, sha256 } = await readSimulationPoints(a);
  const trend = await trendOption(a.trend);
  const r = simulateRunHeatFlow(points, heatFlowSimulationOptions(a, trend), heatFlow, crsDef, realizations, seed);
  return {
    values: r.values,
    source: r.source,
    sha256,
    driftSha256: trend.sha256,
    warnings: [...warnings, ...r.warnings.map((w) => `heat-flow simulation: ${w}`)],
  };
}

/**
 * Heat-flow realizations from a file written by `simulate --keep-realizations` (server/cli/realizations-file.ts):
 * they must be heat flow (mW/m²) on the heat-flow grid; `count` (the --realizations given, else all) takes the first
 * `count` of them (realization r does not depend on how many were simulated).
 */
export async function realizationsFromFile(
  path: string,
  heatFlow: Grid<Float32Array>,
  withSd: boolean,
  count: number | null,
): Promise<{ values: Float32Array; source: string; sha256: string; warnings: string[] }> {
  if (withSd)
    throw new InputError(
      '--heat-flow-sd does not go with --realizations-from: the spread comes from the realizations',
      [{ field: 'heat-flow-sd', problem: 'drop it, or drop --realizations-from' }],
      'bad_option',
    );
  const { header: h, values } = await readRealizationsFile(path);
  if (h.units !== 'mW/m²')
    throw new InputError(
      `${path} holds ${h.field} in "${h.units}", not heat flow in mW/m²`,
      [{ feature: path, field: 'units', problem: 'expected realizations of heatFlowMWm2 (mW/m²)' }],
      'bad_realizations_file',
    );
  const grid = { ...heatFlow, ...h, values: heatFlow.values, units: h.units };
  if (!sameGrid(grid, heatFlow)) throw offGrid(path, heatFlow, 'bad_realizations_file');
  const n = count ?? h.realizations;
  if (!(n >= 1 && n <= h.realizations))
    throw new InputError(
      `--realizations ${n}: ${path} holds ${h.realizations} realizations`,
      [{ field: 'realizations', problem: `expected 1..${h.realizations} with --realizations-from` }],
      'bad_option',
    );
  const cells = heatFlow.width * heatFlow.height;
  return {
    values: values.subarray(0, n * cells),
    source: `heat flow from ${n} of the ${h.realizations} realizations in ${path} (${h.field}, seed ${h.seed}, written by ${String(h.provenance.verb ?? 'simulate')})`,
    sha256: h.dataSha256,
    warnings: [],
  };
}

type HeatFlowRealizations = Awaited<ReturnType<typeof realizationsFromFile>>;

/** The heat-flow grid (--heat-flow, --band) and its standard deviation (--heat-flow-sd, on the same grid), with their SHA-256s. */
export async function readHeatFlowGrids(
  hfPath: string,
  sdPath: string | undefined,
  band: number | undefined,
): Promise<{ heatFlow: Grid<Float32Array>; heatFlowSd: Grid<Float32Array> | null; crsDef: string; inputs: Record<string, string> }> {
  const hfBytes = await readBytes(hfPath, 'heat-flow');
  const hf = await readGridGeoTiff(hfBytes, hfPath, band);
  const heatFlow: Grid<Float32Array> = { ...hf.grid, units: 'mW/m²' };
  const inputs: Record<string, string> = { heatFlow: sha256Hex(hfBytes) };
  if (sdPath === undefined) return { heatFlow, heatFlowSd: null, crsDef: hf.crsDef, inputs };
  const sdBytes = await readBytes(sdPath, 'heat-flow-sd');
  const sd = await readGridGeoTiff(sdBytes, sdPath, band);
  if (!sameGrid(sd.grid, heatFlow)) throw offGrid(sdPath, heatFlow, 'bad_geotiff');
  inputs.heatFlowSd = sha256Hex(sdBytes);
  const heatFlowSd = { ...sd.grid, west: heatFlow.west, north: heatFlow.north, dx: heatFlow.dx, dy: heatFlow.dy, units: 'mW/m²' };
  return { heatFlow, heatFlowSd, crsDef: hf.crsDef, inputs };
}

const badOption = (field: string, message: string, problem: string) => new InputError(message, [{ field, problem }], 'bad_option');

/**
 * The Monte Carlo's heat-flow realizations: simulated from --points on the heat-flow grid, read from
 * --realizations-from, or none (q + sd·z, deprecated); their SHA-256 goes into `inputs`. Returns the realizations'
 * count (from the file with --realizations-from).
 */
export async function heatFlowRealizationsOf(
  a: IsothermArgs,
  grids: { heatFlow: Grid<Float32Array>; heatFlowSd: Grid<Float32Array> | null; crsDef: string; inputs: Record<string, string> },
  realizations: number,
  seed: number,
): Promise<{ simulated: HeatFlowRealizations | null; realizations: number }> {
  const { heatFlow, heatFlowSd, inputs } = grids;
  if (a.points !== undefined && a['realizations-from'] !== undefined)
    throw badOption('realizations-from', 'give --points (simulate here) or --realizations-from (fields simulated before), not both', 'conflicts with --points');
  if (a.points !== undefined) {
    if (heatFlowSd !== null)
      throw badOption(
        'heat-flow-sd',
        '--heat-flow-sd does not go with --points: the spread comes from the conditional simulations',
        'drop it, or drop --points',
      );
    for (const k of ['cell-km', 'size', 'bbox', 'crs'] as const)
      if (a[k] !== undefined) throw badOption(k, `--${k} does not go with isotherms: the grid is the heat-flow grid's`, 'drop it');
    if (!(realizations >= 1))
      throw badOption('realizations', '--points needs --realizations N (≥ 1): the percentiles come from N simulated heat-flow fields', 'missing');
    const simulated = await simulateOnHeatFlowGrid(a, heatFlow, grids.crsDef, realizations, seed);
    inputs.points = simulated.sha256;
    if (simulated.driftSha256 !== null) inputs.drift = simulated.driftSha256;
    return { simulated, realizations };
  }
  if (a['realizations-from'] !== undefined) {
    const simulated = await realizationsFromFile(a['realizations-from'], heatFlow, heatFlowSd !== null, a.realizations === undefined ? null : realizations);
    inputs.realizations = simulated.sha256;
    return { simulated, realizations: simulated.values.length / (heatFlow.width * heatFlow.height) };
  }
  if (a['heat-flow-error-correlation'] !== undefined)
    process.stderr.write('warning: --heat-flow-error-correlation is deprecated: give --points SITES to simulate spatially coherent heat-flow fields\n');
  if (realizations > 0 && heatFlowSd === null) process.stderr.write('note: no --heat-flow-sd grid: the percentiles reflect the model parameters only\n');
  return { simulated: null, realizations };
}
