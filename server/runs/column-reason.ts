/**
 * Why a run has no heat flow at a point, for the column inspector's answer (POST /api/column with a run): outside the
 * run's grid; in a cell with no site visible across the faults (the run's `no-data-across-faults` layer), naming the
 * faults on the paths to the nearest sites; or in another empty cell (no site within the search radius, or outside the
 * run's region). A point in a filled cell always has a value (server/runs/grids.ts `sampleAtLonLat`).
 */
import { InputError, type InputProblem } from '../../shared/errors.ts';
import { cellIndexFromXY, gridBbox } from '../../shared/grid/grid.ts';
import { faultsOnPaths, type FaultPaths, type NamedTrace } from '../../shared/interp/fault-paths.ts';
import { pointInPolygon, polygonsOf } from '../../shared/resource/polygon-mask.ts';
import type { RunRequest } from '../../shared/schema/run.ts';
import type { Store } from '../store/types.ts';
import type { RunGrid } from './grids.ts';
import { NO_DATA_ACROSS_FAULTS } from './no-data-layer.ts';

/** Nearest sites whose paths name the faults in the way. */
export const REASON_NEAREST_SITES = 8;

/** The work that names the faults (sites and faults bodies parsed off the request thread). */
export interface FaultPathsTask {
  kind: 'fault-paths';
  sitesBody: string;
  faultsBody: string;
  lon: number;
  lat: number;
}

/** Worker side of `FaultPathsTask`: the stored sites and fault traces (names from `name`, else `id`). */
export function faultPathsOf(t: FaultPathsTask): FaultPaths {
  const sites = (JSON.parse(t.sitesBody) as { features: { geometry: { coordinates: number[] } }[] }).features;
  const lon = Float64Array.from(sites, (f) => f.geometry.coordinates[0]);
  const lat = Float64Array.from(sites, (f) => f.geometry.coordinates[1]);
  const faults = (
    JSON.parse(t.faultsBody) as { features: { id?: unknown; geometry: { type: string; coordinates: unknown }; properties?: Record<string, unknown> }[] }
  ).features;
  const traces: NamedTrace[] = faults.map((f, i) => {
    const p = f.properties ?? {};
    const name = typeof p.name === 'string' && p.name !== '' ? p.name : typeof p.id === 'string' ? p.id : typeof f.id === 'string' ? f.id : `fault ${i + 1}`;
    const g = f.geometry;
    return { name, lines: g.type === 'LineString' ? [g.coordinates as number[][]] : (g.coordinates as number[][][]) };
  });
  return faultsOnPaths(t.lon, t.lat, { lon, lat }, traces, REASON_NEAREST_SITES);
}

interface ReasonDeps {
  store: Store;
  /** Runs the fault-path task on a worker pool. */
  faultPaths: (task: FaultPathsTask) => Promise<FaultPaths>;
}

/** A coordinate to 1e-5° (about a metre), as a click gives it: `12.34567` rather than fourteen decimals. */
const deg = (v: number) => String(Math.round(v * 1e5) / 1e5);
const at = (lon: number, lat: number) => `no heat-flow value at ${deg(lon)}, ${deg(lat)}`;

/** True when (lon, lat) lies in the area of the run's no-data-across-faults layer. */
async function inHiddenArea(store: Store, runId: string, lon: number, lat: number): Promise<boolean> {
  const file = await store.getRunFile(runId, NO_DATA_ACROSS_FAULTS, 'geojson');
  if (!file) return false;
  const fc = JSON.parse(new TextDecoder().decode(file.bytes)) as { features: { geometry: Parameters<typeof polygonsOf>[0]; properties: { part?: string } }[] };
  const area = fc.features.find((f) => f.properties.part === 'area');
  return area !== undefined && polygonsOf(area.geometry).some((poly) => pointInPolygon(lon, lat, poly));
}

/** The faults sentence: "the paths to its 8 nearest sites cross Skarvel fault (8 paths), Brask lineament (3)". */
function faultsText(fp: FaultPaths): string {
  if (fp.faults.length === 0) return '';
  const list = fp.faults.map((f, i) => `${f.name} (${f.crossings}${i === 0 ? (f.crossings === 1 ? ' path' : ' paths') : ''})`).join(', ');
  return `; the straight paths to its ${fp.paths} nearest sites cross ${list}`;
}

/** The reason a finished run has no heat flow at (lon, lat), as the 422 `no_data_here` error the route throws. */
export async function noHeatFlowError(deps: ReasonDeps, run: { id: string; request: unknown }, heat: RunGrid, lon: number, lat: number): Promise<InputError> {
  const g = heat.grid;
  const [x, y] = heat.fromLonLat(lon, lat);
  const field = 'lon,lat';
  if (cellIndexFromXY(g, x, y) < 0) {
    const [w, s, e, n] = gridBbox(g).map((v) => Math.round(v * 1e4) / 1e4);
    return new InputError(
      `${at(lon, lat)}: the point is outside the run's grid (W ${w}, S ${s}, E ${e}, N ${n}, ${g.crs})`,
      [{ field, problem: 'outside the run grid' }],
      'no_data_here',
    );
  }
  if (await inHiddenArea(deps.store, run.id, lon, lat)) {
    const req = run.request as RunRequest;
    const [sites, faults] = await Promise.all([deps.store.getDataset(req.sites), req.faults !== undefined ? deps.store.getDataset(req.faults) : null]);
    const fp = sites && faults ? await deps.faultPaths({ kind: 'fault-paths', sitesBody: sites.body, faultsBody: faults.body, lon, lat }) : null;
    const details: InputProblem[] = [{ field, problem: 'no heat-flow site visible across faults (the no-data-across-faults layer)' }];
    for (const f of fp?.faults ?? [])
      details.push({ feature: f.name, field: 'faults', problem: `crosses ${f.crossings} of the paths to the ${fp!.paths} nearest sites` });
    return new InputError(
      `${at(lon, lat)}: the cell sees no heat-flow site, since every straight path from it to a site crosses a fault trace${fp ? faultsText(fp) : ''}`,
      details,
      'no_data_here',
    );
  }
  return new InputError(
    `${at(lon, lat)}: the cell is empty, with no heat-flow site within the search radius or outside the run's region`,
    [{ field, problem: 'empty cell: no site within reach, or masked' }],
    'no_data_here',
  );
}
