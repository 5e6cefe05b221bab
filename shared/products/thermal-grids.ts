/**
 * Thermal grids from a heat-flow grid and a thermal model (one compiled model per zone: zone 0 the base model,
 * zone k the model inside override polygon k): depth to each isotherm (km), temperature at each depth (°C), heat
 * flow at the base of the model (mW/m²), the facies reached at a chosen depth (class codes), the depth of the first
 * solidus crossing (km), and a flag grid of cells where the model is inconsistent with the heat flow.
 *
 * Depths and temperatures come from the thermal engine's grid form (geothermGrid: the closed-form layered
 * Kirchhoff solution, Turcotte & Schubert 2002 §4-6/§4-8, Chapman 1986) called with per-cell zone indices; the
 * facies and solidus products re-solve the same column with the engine's solver. Work goes by row ranges
 * (`computeThermalGridRows`), so a caller can tile, report progress and stop between tiles; results never depend
 * on the tiling.
 *
 * Flag values (`inconsistent`): 0 consistent; otherwise the engine's status bits — 1 the heat flow reaches 0
 * inside the stack (the surface heat flow is too low for the model's heat production), 2 k(T) = k0/(1 + bT) is
 * undefined (1 + bT ≤ 0), 4 a surface heat flow ≤ 0; NaN where the heat flow is no data. The melt onset (the
 * fluid-absent/dry solidus of the rock there, shared/thermal/limits.ts) is a physical limit of the conductive
 * column, not a contradiction: it is not flagged here but given by the melt-onset grid. Below the depth where the
 * column ends the engine gives no temperature, so those cells' deeper products are NoData, not guesses.
 * In mantle layers below the lithosphere base temperatures follow the mantle adiabat (limits.ts).
 */
import type { Grid, GridSpec } from '../grid/grid.ts';
import { ColumnState, geothermGrid, lithostaticPressureMPa, kbarFromMPa, type CompiledModel, type GeothermGridQuery } from '../thermal/index.ts';
import { faciesCode } from './facies-grid.ts';
import { buildGeothermTable, geothermGridByTable, type GeothermTable } from './thermal-table.ts';

export interface ThermalGridSpec {
  /** Surface heat flow per cell, mW/m² (NaN = no data); its georeferencing is that of every output. */
  heatFlow: Grid<Float32Array | Float64Array>;
  /** Compiled models indexed by zone (zone 0 = base). */
  models: CompiledModel[];
  /** Zone index per cell (default: all 0). */
  zones?: Uint16Array;
  isothermsC: number[];
  depthsKm: number[];
  /** Depth for the facies class grid, km (null/undefined = no facies grid). */
  faciesDepthKm?: number | null;
  /** Isotherm and solidus searches stop here, km. */
  maxDepthKm: number;
  /** Compute the solidus-crossing grid (default true). */
  solidus?: boolean;
  /**
   * Nodes of the per-zone table over heat flow (thermal-table.ts); null = solve every cell. Default: a table of
   * TABLE_NODES nodes for each zone with at least TABLE_MIN_CELLS cells, every cell solved in the others.
   */
  tableNodes?: number | null;
}

/** Nodes of the default heat-flow table, and the fewest cells of a zone that gets one (its build costs 4·nodes solves). */
export const TABLE_NODES = 2048;
export const TABLE_MIN_CELLS = 64 * TABLE_NODES;

/** Whole-grid output buffers (row-major, indexed like the heat-flow grid). */
export interface ThermalGridBuffers {
  isothermDepthKm: Float32Array[];
  temperatureC: Float32Array[];
  baseHeatFlowMWm2: Float32Array;
  inconsistent: Float32Array;
  status: Uint8Array;
  /** Rock-aware water-saturated solidus crossing, km (NaN: not reached). */
  solidusDepthKm: Float32Array | null;
  /** Melt onset (fluid-absent/dry solidus of the rock there), km (NaN: not reached). */
  meltOnsetKm: Float32Array | null;
  facies: Float32Array | null;
  /** 1 where the facies point is within one boundary width of another field. */
  faciesApproximate: Uint8Array | null;
  /** Temperature at the facies depth, °C: the buffer of that depth in `temperatureC` when it is one of them. */
  faciesTemperatureC: Float32Array | null;
}

/** Allocates the output buffers of a spec (NaN-filled). */
export function allocateThermalGridBuffers(spec: ThermalGridSpec): ThermalGridBuffers {
  const cells = spec.heatFlow.width * spec.heatFlow.height;
  const f = () => new Float32Array(cells).fill(NaN);
  const facies = spec.faciesDepthKm !== undefined && spec.faciesDepthKm !== null;
  const temperatureC = spec.depthsKm.map(f);
  return {
    isothermDepthKm: spec.isothermsC.map(f),
    temperatureC,
    baseHeatFlowMWm2: f(),
    inconsistent: f(),
    status: new Uint8Array(cells),
    solidusDepthKm: (spec.solidus ?? true) ? f() : null,
    meltOnsetKm: (spec.solidus ?? true) ? f() : null,
    facies: facies ? f() : null,
    faciesApproximate: facies ? new Uint8Array(cells) : null,
    faciesTemperatureC: facies ? (temperatureC[spec.depthsKm.indexOf(spec.faciesDepthKm!)] ?? f()) : null,
  };
}

/** Per-spec data built once: facies pressures per zone, a column state per model, the heat-flow tables per zone. */
export interface ThermalGridPlan {
  spec: ThermalGridSpec;
  /** Lithostatic pressure at the facies depth per zone, kbar. */
  faciesPressureKbar: Float64Array;
  states: ColumnState[];
  /** The query every cell answers (the facies depth last among the depths unless it is one of them). */
  query: GeothermGridQuery;
  /** Per zone: its heat-flow table, or null where its cells are solved one by one. */
  tables: Array<GeothermTable | null>;
}

/** Per zone: the finite heat-flow range and cell count. */
function zoneRanges(spec: ThermalGridSpec): { lo: Float64Array; hi: Float64Array; cells: Float64Array } {
  const n = spec.models.length;
  const lo = new Float64Array(n).fill(Infinity),
    hi = new Float64Array(n).fill(-Infinity),
    cells = new Float64Array(n);
  const q = spec.heatFlow.values,
    zones = spec.zones;
  for (let c = 0; c < q.length; c++) {
    const v = q[c];
    if (!(v > 0 && v < Infinity)) continue;
    const z = zones === undefined ? 0 : zones[c];
    cells[z]++;
    if (v < lo[z]) lo[z] = v;
    if (v > hi[z]) hi[z] = v;
  }
  return { lo, hi, cells };
}

/** The per-zone heat-flow tables of a spec (null entries: that zone solved per cell). */
function zoneTables(spec: ThermalGridSpec, query: GeothermGridQuery): Array<GeothermTable | null> {
  const nodes = spec.tableNodes === undefined ? TABLE_NODES : spec.tableNodes;
  if (nodes === null) return spec.models.map(() => null);
  const auto = spec.tableNodes === undefined;
  const solidus = spec.solidus ?? true;
  const { lo, hi, cells } = zoneRanges(spec);
  return spec.models.map((cm, z) =>
    (auto && cells[z] < TABLE_MIN_CELLS) || !(hi[z] > lo[z])
      ? null
      : buildGeothermTable(cm, query, { basal: true, meltOnset: solidus, wetSolidus: solidus }, lo[z], hi[z], nodes),
  );
}

/** Checks a spec and prepares its per-zone data. */
export function planThermalGrids(spec: ThermalGridSpec): ThermalGridPlan {
  const g = spec.heatFlow;
  const cells = g.width * g.height;
  if (g.values.length !== cells) throw new RangeError(`heat-flow grid has ${g.values.length} values for ${g.width} × ${g.height} cells`);
  if (spec.models.length === 0) throw new RangeError('at least one compiled model is needed');
  if (spec.models.length > 1 && spec.zones === undefined) throw new RangeError('several models need a zone grid');
  if (spec.zones !== undefined) {
    if (spec.zones.length !== cells) throw new RangeError(`zone grid has ${spec.zones.length} cells, heat-flow grid ${cells}`);
    for (let i = 0; i < cells; i++)
      if (spec.zones[i] >= spec.models.length) throw new RangeError(`cell ${i}: zone ${spec.zones[i]} has no model (${spec.models.length} given)`);
  }
  if (!(spec.maxDepthKm > 0)) throw new RangeError(`maxDepthKm must be > 0, got ${spec.maxDepthKm}`);
  const fd = spec.faciesDepthKm;
  if (fd !== undefined && fd !== null && !(fd >= 0)) throw new RangeError(`faciesDepthKm must be ≥ 0, got ${fd}`);
  const faciesPressureKbar = Float64Array.from(spec.models, (cm) => (fd === undefined || fd === null ? NaN : kbarFromMPa(lithostaticPressureMPa(cm, fd))));
  const extraDepth = fd !== undefined && fd !== null && !spec.depthsKm.includes(fd);
  const query = { isothermsC: spec.isothermsC, depthsKm: extraDepth ? [...spec.depthsKm, fd] : spec.depthsKm, maxDepthKm: spec.maxDepthKm };
  return { spec, faciesPressureKbar, states: spec.models.map((cm) => new ColumnState(cm.nLayers)), query, tables: zoneTables(spec, query) };
}

/** Computes rows [r0, r1) of every product into `out` (whole-grid buffers). */
export function computeThermalGridRows(plan: ThermalGridPlan, r0: number, r1: number, out: ThermalGridBuffers): void {
  const spec = plan.spec;
  const g = spec.heatFlow;
  if (!(Number.isInteger(r0) && Number.isInteger(r1) && r0 >= 0 && r1 <= g.height && r0 <= r1))
    throw new RangeError(`bad row range [${r0}, ${r1}) for ${g.height} rows`);
  const start = r0 * g.width,
    end = r1 * g.width;
  const q = g.values;
  const zones = spec.zones;
  const fd = spec.faciesDepthKm;
  const withFacies = fd !== undefined && fd !== null && out.facies !== null && out.faciesTemperatureC !== null;
  const gridOut = {
    isothermDepthKm: out.isothermDepthKm,
    temperatureC: plan.query.depthsKm.length > spec.depthsKm.length ? [...out.temperatureC, out.faciesTemperatureC!] : out.temperatureC,
    status: out.status,
    basalHeatFlowMWm2: out.baseHeatFlowMWm2,
    ...(out.meltOnsetKm === null ? {} : { meltOnsetKm: out.meltOnsetKm }),
    ...(out.solidusDepthKm === null ? {} : { wetSolidusKm: out.solidusDepthKm }),
  };
  if (plan.tables.some((t) => t !== null)) geothermGridByTable(spec.models, plan.tables, q, plan.query, gridOut, zones, start, end);
  else geothermGrid(spec.models, q, plan.query, gridOut, { zones, start, end });
  const flag = out.inconsistent,
    status = out.status;
  // The engine's melt-onset bit (8) is left out: the melt-onset grid carries it.
  for (let c = start; c < end; c++) flag[c] = q[c] === q[c] ? status[c] & 7 : NaN;
  if (withFacies) {
    const t = out.faciesTemperatureC!,
      fac = out.facies!,
      apx = out.faciesApproximate!;
    const a = { approximate: false };
    for (let c = start; c < end; c++) {
      const code = faciesCode(t[c], plan.faciesPressureKbar[zones === undefined ? 0 : zones[c]], a);
      fac[c] = code;
      apx[c] = a.approximate && code === code ? 1 : 0;
    }
  }
}

/** Convenience: all rows at once. */
export function computeThermalGrids(spec: ThermalGridSpec): ThermalGridBuffers {
  const plan = planThermalGrids(spec);
  const out = allocateThermalGridBuffers(spec);
  computeThermalGridRows(plan, 0, spec.heatFlow.height, out);
  return out;
}

/**
 * Counts of a finished flag grid: inconsistent cells (contradictions between model and heat flow) by cause and
 * no-data cells; `meltOnset` counts the cells of the melt-onset grid (when given) whose melt onset lies above the
 * maximum depth, apart from the inconsistent ones.
 */
export function inconsistencyCounts(
  flag: Float32Array,
  meltOnsetKm: Float32Array | null = null,
): { inconsistent: number; heatFlowExhausted: number; conductivityUndefined: number; nonPositiveHeatFlow: number; meltOnset: number; noData: number } {
  let inconsistent = 0,
    ex = 0,
    ku = 0,
    np = 0,
    mo = 0,
    nd = 0;
  for (let i = 0; i < flag.length; i++) {
    const v = flag[i];
    if (v !== v) {
      nd++;
      continue;
    }
    if (v === 0) continue;
    inconsistent++;
    if (v & 1) ex++;
    if (v & 2) ku++;
    if (v & 4) np++;
  }
  if (meltOnsetKm !== null) for (let i = 0; i < meltOnsetKm.length; i++) if (Number.isFinite(meltOnsetKm[i])) mo++;
  return { inconsistent, heatFlowExhausted: ex, conductivityUndefined: ku, nonPositiveHeatFlow: np, meltOnset: mo, noData: nd };
}

/** Wraps a buffer as a Grid with the heat-flow grid's georeferencing. */
export function productGrid(spec: GridSpec, values: Float32Array, units: string): Grid<Float32Array> {
  return { width: spec.width, height: spec.height, west: spec.west, north: spec.north, dx: spec.dx, dy: spec.dy, crs: spec.crs, values, units };
}
