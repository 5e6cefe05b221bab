/**
 * A whole heat-in-place assessment, from grids and options to the report object the CLI, the HTTP routes and the
 * exports share: membership of the polygon and zones, cell areas on the ellipsoid, the deterministic and Monte
 * Carlo runs (monte-carlo.ts) and the area totals (totals.ts). Pure: the caller reads the files, computes the input
 * hashes and, for a projected grid, each cell centre's longitude/latitude.
 */
import { CAUTION } from '../caution.ts';
import { InputError } from '../errors.ts';
import { gridRowAreasM2, isLonLatCrs, projectedCellAreasM2, type ToLonLat } from '../geodesy/cell-area.ts';
import { geodesicPolygonAreaM2 } from '../geodesy/polygon-area.ts';
import type { Grid } from '../grid/grid.ts';
import type { ThermalModelInput } from '../schema/model.ts';
import { isUncertainModel } from '../thermal/realize.ts';
import { TOOL_NAME, VERSION } from '../version.ts';
import { DEFAULT_GL_ORDER } from './column-heat.ts';
import { ROUTES } from './exergy.ts';
import { allocateResourceOutput, combineSums, resourceRange, type ResourceOutput } from './monte-carlo.ts';
import { prepareResource } from './prepare.ts';
import { SUM_BLOCK, type PreparedResource, type ResourceSpec } from './resource-spec.ts';
import { lonLatGridPolygonMask, pointsPolygonMask, polygonsOf } from './polygon-mask.ts';
import type { AreaGeometry, HeatInPlaceOptions } from './schema.ts';
import { areaTotals, type AreaTotals } from './totals.ts';
import type { ZoneLabels } from './zones.ts';

type AnyGrid = Grid<Float32Array | Float64Array>;

export interface HeatInPlaceInput {
  heatFlow: AnyGrid;
  heatFlowSd?: AnyGrid;
  /**
   * Heat-flow realizations on the heat-flow grid (realization-major, options.realizations × cells, mW/m²), e.g.
   * conditional simulations: the Monte Carlo then draws heat flow from them (heatFlowSd is not used) and
   * `source` says where they come from.
   */
  heatFlowRealizations?: { values: Float32Array; source: string };
  model: ThermalModelInput;
  /** Name of the model for the report (default its `name`). */
  modelLabel?: string;
  polygon?: AreaGeometry;
  polygonLabel?: string;
  zones?: ZoneLabels & { source: string };
  /** Cell-centre longitude/latitude of a projected grid (needed for polygon and zone membership there). */
  centresLonLat?: { lon: ArrayLike<number>; lat: ArrayLike<number> };
  /** Metres per CRS unit of a projected grid (default 1). */
  metresPerUnit?: number;
  /** Inverse projection of a projected grid (grid units → lon/lat): cell areas are then ground areas on the ellipsoid. */
  toLonLat?: ToLonLat;
  options: HeatInPlaceOptions;
  /** Content hashes of the inputs, by role (provenance). */
  inputHashes?: Record<string, string>;
  /** Cells per processing chunk (a multiple of SUM_BLOCK; results do not depend on it). */
  chunkCells?: number;
}

export interface HeatInPlaceResult {
  report: HeatInPlaceReport;
  /** Per-cell output buffers (densities) and the grid layout they follow. */
  output: ResourceOutput;
  layout: Omit<AnyGrid, 'values' | 'units'>;
}

export interface HeatInPlaceReport extends AreaTotals {
  area: 'polygon' | 'grid';
  totals: {
    grid: AreaTotals;
    polygon: (AreaTotals & { polygonAreaKm2: number; label: string | null }) | null;
    zones: (AreaTotals & { zone: string })[] | null;
  };
  method: Record<string, unknown>;
  inputs: Record<string, unknown>;
  monteCarlo: {
    realizations: number;
    accepted: number;
    rejected: number;
    firstRejection: string | null;
    seed: number;
    heatFlowErrorCorrelation: string | null;
    heatFlow: string;
  } | null;
  densityRange: { heatPJkm2: { min: number | null; max: number | null }; electricMWekm2: { min: number | null; max: number | null } };
  warnings: string[];
  caution: string;
  provenance: Record<string, unknown>;
}

export const PERCENTILE_CONVENTION =
  "p10, p50 and p90 are the 10th, 50th and 90th percentiles of the Monte Carlo realizations (Hyndman & Fan 1996 type 7, linear interpolation), so p10 ≤ p50 ≤ p90; a total's percentiles are those of its per-realization sums, never sums of cell percentiles";
export const EXCEEDANCE_READING =
  'Exceedance reading: the low case p10 is exceeded in 90 % of realizations, which resource reporting often calls "P90"; the high case p90 is exceeded in 10 % (often called "P10")';
export const NO_REALIZATIONS_NOTE = 'without realizations the percentiles, mean and sd are null and "nominal" holds the deterministic value';
export const CENTRAL_VALUE_NOTE =
  'the central value of a total is the mean (and p50) of its realizations; "nominal" is the deterministic run, shown beside it with meanMinusNominal = mean − nominal (not zero where the total is not linear in heat flow, e.g. through the Tmin threshold); sd is the sample standard deviation of the realizations';

function sameLayout(a: AnyGrid, b: AnyGrid): boolean {
  const close = (x: number, y: number, s: number) => Math.abs(x - y) <= 1e-9 * Math.max(1, Math.abs(s));
  return (
    a.width === b.width &&
    a.height === b.height &&
    a.crs === b.crs &&
    close(a.west, b.west, a.dx) &&
    close(a.north, b.north, a.dy) &&
    close(a.dx, b.dx, a.dx) &&
    close(a.dy, b.dy, a.dy)
  );
}

function minMax(v: Float32Array): { min: number | null; max: number | null } {
  let lo = Infinity,
    hi = -Infinity;
  for (let i = 0; i < v.length; i++) {
    const x = v[i];
    if (x === x) {
      if (x < lo) lo = x;
      if (x > hi) hi = x;
    }
  }
  return lo <= hi ? { min: lo, max: hi } : { min: null, max: null };
}

/** Checks the inputs against the heat-flow grid; returns the cells with data. */
function checkInputs(input: HeatInPlaceInput, lonLat: boolean): number {
  const g = input.heatFlow;
  const cells = g.width * g.height;
  if (input.heatFlowSd !== undefined && !sameLayout(g, input.heatFlowSd)) {
    throw new InputError(
      'the heat-flow standard-deviation grid does not match the heat-flow grid',
      [{ field: 'heatFlowSd', problem: `expected ${g.width} × ${g.height} cells at the same origin, cell size and CRS (${g.crs})` }],
      'grid_mismatch',
    );
  }
  if (!lonLat && (input.polygon !== undefined || input.zones?.source === 'polygons') && input.centresLonLat === undefined) {
    throw new RangeError('a projected grid needs centresLonLat for polygon membership');
  }
  if (input.zones !== undefined && input.zones.labels.length !== cells)
    throw new InputError(
      'the zone layer does not match the heat-flow grid',
      [{ field: 'zones', problem: `expected ${cells} cells, got ${input.zones.labels.length}` }],
      'grid_mismatch',
    );
  let dataCells = 0;
  for (let c = 0; c < cells; c++) if (g.values[c] === g.values[c]) dataCells++;
  if (dataCells === 0) throw new InputError('the heat-flow grid has no data', [{ field: 'heatFlow', problem: 'every cell is NoData' }], 'no_data');
  const sims = input.heatFlowRealizations;
  if (sims !== undefined && sims.values.length !== input.options.realizations * cells) {
    throw new InputError(
      `the heat-flow realizations hold ${sims.values.length} values, not ${input.options.realizations} realizations × ${cells} cells`,
      [{ field: 'realizations', problem: `expected ${input.options.realizations * cells} values` }],
      'grid_mismatch',
    );
  }
  return dataCells;
}

/** The cells (1) of the polygon and its geodesic area (km²); the polygon must hold a cell centre with data. */
function polygonMembership(input: HeatInPlaceInput, lonLat: boolean): { mask: Uint8Array; areaKm2: number } | null {
  if (input.polygon === undefined) return null;
  const g = input.heatFlow;
  const polys = polygonsOf(input.polygon);
  const mask = lonLat ? lonLatGridPolygonMask(g, polys) : pointsPolygonMask(input.centresLonLat!.lon, input.centresLonLat!.lat, polys);
  let members = 0,
    withData = 0;
  for (let c = 0; c < mask.length; c++)
    if (mask[c] === 1) {
      members++;
      if (g.values[c] === g.values[c]) withData++;
    }
  if (members === 0)
    throw new InputError(
      'the polygon does not overlap the grid: no cell centre lies inside it',
      [{ field: 'polygon', problem: 'draw or upload a polygon over the heat-flow grid (a cell counts when its centre is inside)' }],
      'polygon_off_grid',
    );
  if (withData === 0)
    throw new InputError(
      'the polygon covers only NoData cells of the heat-flow grid',
      [{ field: 'polygon', problem: `${members} cells inside, none with heat-flow data` }],
      'polygon_no_data',
    );
  return { mask, areaKm2: geodesicPolygonAreaM2(input.polygon) / 1e6 };
}

/** The Monte Carlo spec of the assessment. */
function resourceSpecOf(
  input: HeatInPlaceInput,
  rowAreaM2: Float64Array,
  cellAreaM2: Float64Array | undefined,
  polygonMask: Uint8Array | undefined,
): ResourceSpec {
  const g = input.heatFlow,
    o = input.options,
    sims = input.heatFlowRealizations;
  return {
    models: [input.model],
    heatFlowMWm2: g.values,
    heatFlowSdMWm2: sims === undefined ? input.heatFlowSd?.values : undefined,
    heatFlowErrorCorrelation: o.heatFlowErrorCorrelation,
    heatFlowRealizationsMWm2: sims?.values,
    width: g.width,
    rowAreaM2,
    ...(cellAreaM2 === undefined ? {} : { cellAreaM2 }),
    polygonMask,
    zoneLabels: input.zones?.labels,
    zoneCount: input.zones?.names.length,
    window: { topKm: o.topKm, bottomKm: o.bottomKm, minTempC: o.minTempC, refTempC: o.refTempC },
    parameters: {
      rhoCMJm3K: o.rhoCMJm3K,
      recoveryFactor: o.recoveryFactor,
      utilizationEfficiency: o.utilizationEfficiency,
      conversionEfficiency: o.conversionEfficiency,
      lifeYears: o.lifeYears,
    },
    realizations: o.realizations,
    seed: o.seed,
  };
}

/** Prepares and runs the Monte Carlo in chunks (a RangeError of the spec becomes an InputError). */
function runResource(spec: ResourceSpec, chunk: number): { prep: PreparedResource; out: ResourceOutput } {
  let prep: PreparedResource;
  try {
    prep = prepareResource(spec);
  } catch (e) {
    if (e instanceof RangeError) throw new InputError(`heat in place cannot be assessed: ${e.message}`, [{ problem: e.message }], 'invalid_input');
    throw e;
  }
  const out = allocateResourceOutput(prep);
  for (let s = 0; s < prep.cells; s += chunk) resourceRange(prep, s, Math.min(prep.cells, s + chunk), out);
  return { prep, out };
}

/** The warnings of a finished assessment. */
function assessmentWarnings(input: HeatInPlaceInput, prep: PreparedResource, out: ResourceOutput): string[] {
  const warnings: string[] = [];
  const o = input.options,
    N = o.realizations,
    sims = input.heatFlowRealizations;
  const truncated = out.blockTruncated.reduce((a, b) => a + b, 0);
  const sdMissing = out.blockSdMissing.reduce((a, b) => a + b, 0);
  if (truncated > 0)
    warnings.push(
      `${truncated} cells have a nominal geotherm that is not valid throughout the window (surface heat flow exhausted by the heat production above): only their valid part is counted`,
    );
  if (sdMissing > 0) warnings.push(`${sdMissing} cells have heat flow but no standard deviation: their heat flow is taken as exact`);
  if (N > 0) {
    const anyUncertain =
      isUncertainModel(input.model) ||
      input.heatFlowSd !== undefined ||
      sims !== undefined ||
      [o.rhoCMJm3K, o.recoveryFactor, o.utilizationEfficiency, o.conversionEfficiency].some((v) => v !== undefined && typeof v !== 'number');
    if (!anyUncertain) warnings.push('nothing is uncertain (no distributions, no heat-flow standard deviation): every realization is the same');
    if (prep.rejected > 0)
      warnings.push(`${prep.rejected} of ${N} realizations had physically impossible draws and were left out (first: ${prep.firstRejection})`);
    if (input.heatFlowSd === undefined && sims === undefined)
      warnings.push('no heat-flow standard deviation given: the ranges reflect the model and parameter distributions only');
  }
  if (input.zones !== undefined && input.zones.overlapCells > 0)
    warnings.push(`${input.zones.overlapCells} cells lie in more than one region polygon; each is counted in the first`);
  warnings.push(...prep.nominal.models[0].warnings.filter((w) => !/no densityKgM3/.test(w)));
  return warnings;
}

/** The method texts of the report. */
function methodOf(o: HeatInPlaceOptions, crs: string, areaMethod: string, groundAreas: boolean): Record<string, unknown> {
  return {
    route: ROUTES.exergy.id,
    routeLabel: ROUTES.exergy.label,
    routes: [
      { id: ROUTES.exergy.id, field: 'electricMWe', label: ROUTES.exergy.label },
      { id: ROUTES.thermal.id, field: 'thermalMWt', label: ROUTES.thermal.label },
      { id: ROUTES.conversion.id, field: 'electricMWeConversion', label: ROUTES.conversion.label, computed: o.conversionEfficiency !== undefined },
    ],
    heatInPlace:
      "volumetric method (Muffler & Cataldi 1978; Williams, Reed & Mariner 2008, USGS OFR 2008-1296): heat in place = ρC · ∫ (T(z) − Tref) dz · cell area, over the rock at or above Tmin between topKm and bottomKm, along each cell's steady-state conductive geotherm",
    recoverable: 'recoverable (wellhead) heat = recovery factor Rg × heat in place',
    reservoirTemperature: "each column's ρC-weighted mean temperature of the rock at or above Tmin (reported as TR); T0 = Tref",
    availableWork: "available work integrated over each column's temperature profile, ρC·∫[(T − T0) − T0·ln(T/T0)] dz (kelvin), not from its mean temperature",
    quadrature: `Gauss–Legendre, ${DEFAULT_GL_ORDER} points on each piece between the Tmin isotherm and the layer boundaries (the only kinks of the geotherm); Monte Carlo cells by cubic interpolation in one heat-flow table per realization, split at the heat flows where the integrand's domain changes`,
    cellMembership: 'a cell belongs to the polygon (or a region) when its centre is inside; boundary cells count wholly or not at all',
    cellArea:
      areaMethod === 'ellipsoidal'
        ? 'exact area of each longitude/latitude cell on the WGS84 ellipsoid (authalic-latitude formula, Snyder 1987)'
        : groundAreas
          ? `ground area of each ${crs} cell on the WGS84 ellipsoid: ∬ M·N·cos φ·|∂(φ, λ)/∂(x, y)| over the cell (2 × 2 Gauss–Legendre, inverse projection by proj4)`
          : `dx · dy in the plane of ${crs} (scale distortion not corrected)`,
    percentiles: PERCENTILE_CONVENTION,
    exceedance: EXCEEDANCE_READING,
    noRealizations: NO_REALIZATIONS_NOTE,
    centralValue: CENTRAL_VALUE_NOTE,
    nominal:
      'nominal = the deterministic run: the model with each distribution at its central value (normal/truncated-normal mean, uniform midpoint, triangular mode), the kriged heat flow, and the central value of each parameter; it need not equal p50',
    densityUnits: 'per-cell densities: heat in place PJ/km², electric power (exergy route) MWe/km²',
  };
}

/** The report's Monte Carlo member (null without realizations). */
function monteCarloOf(input: HeatInPlaceInput, prep: PreparedResource): HeatInPlaceReport['monteCarlo'] {
  const o = input.options,
    N = o.realizations,
    sims = input.heatFlowRealizations;
  if (!(N > 0)) return null;
  return {
    realizations: N,
    accepted: N - prep.rejected,
    rejected: prep.rejected,
    firstRejection: prep.firstRejection,
    seed: o.seed,
    heatFlowErrorCorrelation: sims === undefined && input.heatFlowSd !== undefined ? o.heatFlowErrorCorrelation : null,
    heatFlow:
      sims !== undefined
        ? sims.source
        : input.heatFlowSd !== undefined
          ? `kriged value + sd × a standard normal (${o.heatFlowErrorCorrelation === 'independent' ? 'one per cell' : 'one per realization for all cells'}; deprecated: simulate from the points instead)`
          : 'the heat-flow grid as given (no spread)',
  };
}

/** The report's inputs member. */
function inputsOf(input: HeatInPlaceInput, lifeS: number, dataCells: number): Record<string, unknown> {
  const g = input.heatFlow,
    o = input.options;
  return {
    topKm: o.topKm,
    bottomKm: o.bottomKm,
    minTempC: o.minTempC,
    refTempC: o.refTempC,
    rhoCMJm3K: o.rhoCMJm3K,
    recoveryFactor: o.recoveryFactor,
    utilizationEfficiency: o.utilizationEfficiency,
    conversionEfficiency: o.conversionEfficiency ?? null,
    lifeYears: o.lifeYears,
    lifeSeconds: lifeS,
    model: input.modelLabel ?? input.model.name ?? null,
    grid: { width: g.width, height: g.height, west: g.west, north: g.north, dx: g.dx, dy: g.dy, crs: g.crs, cellsWithData: dataCells },
    heatFlowSd: input.heatFlowSd !== undefined,
    heatFlowRealizations: input.heatFlowRealizations !== undefined,
    polygon: input.polygon !== undefined ? (input.polygonLabel ?? 'given') : null,
    zones: input.zones?.source ?? null,
  };
}

/** Runs the assessment. Throws InputError for inputs that cannot be assessed (mismatched grids, a polygon off the grid). */
export function assessHeatInPlace(input: HeatInPlaceInput): HeatInPlaceResult {
  const g = input.heatFlow;
  const lonLat = isLonLatCrs(g.crs);
  const dataCells = checkInputs(input, lonLat);
  const polygon = polygonMembership(input, lonLat);
  const areas = gridRowAreasM2(g, input.metresPerUnit ?? 1);
  // Projected grids: each cell's ground area on the ellipsoid from the inverse projection (any CRS).
  const cellAreaM2 = !lonLat && input.toLonLat !== undefined ? projectedCellAreasM2(g, input.toLonLat) : undefined;
  const warnings: string[] = [];
  if (areas.method === 'planar' && cellAreaM2 === undefined) {
    warnings.push(
      `cell areas are dx·dy in the plane of ${g.crs}, not ground areas: the projection's areal scale factor is not corrected (it is far from 1 in some projections, e.g. 1/cos²φ in Web Mercator)`,
    );
  }
  const spec = resourceSpecOf(input, areas.rowAreaM2, cellAreaM2, polygon?.mask);
  const { prep, out } = runResource(spec, input.chunkCells ?? 64 * SUM_BLOCK);
  const totals = areaTotals(prep, combineSums(prep, out));
  warnings.push(...assessmentWarnings(input, prep, out));
  const polygonTotals = polygon !== null ? { ...totals[prep.polygonSet], polygonAreaKm2: polygon.areaKm2, label: input.polygonLabel ?? null } : null;
  const zoneTotals = input.zones !== undefined ? input.zones.names.map((zone, k) => ({ zone, ...totals[prep.zoneSet0 + k] })) : null;
  const N = input.options.realizations;
  const report: HeatInPlaceReport = {
    ...(polygonTotals ?? totals[0]),
    area: polygonTotals !== null ? 'polygon' : 'grid',
    totals: { grid: totals[0], polygon: polygonTotals, zones: zoneTotals },
    method: methodOf(input.options, g.crs, areas.method, cellAreaM2 !== undefined),
    inputs: inputsOf(input, prep.lifeS, dataCells),
    monteCarlo: monteCarloOf(input, prep),
    densityRange: {
      heatPJkm2: minMax(N > 0 ? out.heatPJkm2!.p50 : out.nominalHeatPJkm2),
      electricMWekm2: minMax(N > 0 ? out.electricMWekm2!.p50 : out.nominalElectricMWekm2),
    },
    warnings,
    caution: CAUTION,
    provenance: {
      tool: TOOL_NAME,
      version: VERSION,
      method: 'volumetric heat in place, available-work (exergy) electric route',
      inputs: input.inputHashes ?? {},
    },
  };
  const { values: _v, units: _u, ...layout } = g;
  return { report, output: out, layout };
}
