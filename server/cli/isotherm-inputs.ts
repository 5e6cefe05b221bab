/**
 * The inputs of `subtherm isotherms` (server/cli/isotherms.ts): the user's grid GeoTIFFs, and the heat-flow
 * realizations of its Monte Carlo, simulated from sites (--points) or read from a file (--realizations-from).
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { loadCrsDefinition } from '../../shared/interp/projection.ts';
import { readGeoTiff } from '../io/geotiff.ts';
import { heatFlowSimulationOptions, readSimulationPoints, type SimulationArgs } from './simulation-input.ts';
import { simulateRunHeatFlow } from '../runs/heat-flow-simulation.ts';
import { readRealizationsFile } from './realizations-file.ts';

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
): Promise<{ values: Float32Array; source: string; sha256: string; warnings: string[] }> {
  if ((a.field ?? 'heatFlowMWm2') !== 'heatFlowMWm2')
    throw new InputError('isotherms simulates heatFlowMWm2 (mW/m²)', [{ field: 'field', problem: 'expected heatFlowMWm2' }], 'bad_option');
  const { points, warnings, sha256 } = await readSimulationPoints(a);
  const r = simulateRunHeatFlow(points, heatFlowSimulationOptions(a), heatFlow, crsDef, realizations, seed);
  return { values: r.values, source: r.source, sha256, warnings: [...warnings, ...r.warnings.map((w) => `heat-flow simulation: ${w}`)] };
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
  if (!sameGrid(grid, heatFlow))
    throw new InputError(
      `${path} is not on the heat-flow grid (size, origin, cell size and CRS must match)`,
      [
        {
          feature: path,
          field: 'grid',
          problem: `expected ${heatFlow.width} × ${heatFlow.height} cells at ${heatFlow.west}, ${heatFlow.north} in ${heatFlow.crs}`,
        },
      ],
      'bad_realizations_file',
    );
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
