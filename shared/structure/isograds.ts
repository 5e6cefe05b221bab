/**
 * Isograds from graded samples in the local km frame: the five indicator surfaces (indicator.ts: indicator kriging
 * by default) on a grid, each surface's 0.5 contour (the isograd) and its 0.1 and 0.9 contours (the band where it may
 * lie) traced into oriented lines (isolines.ts; higher grade on the right), clipped to where
 * samples support them (cells farther than `supportKm` from the nearest visible sample are no data) and cut
 * where the grid edge between two cell centres crosses a fault (no line is drawn across or along a fault).
 * Closed loops around one or two samples that their neighbours contradict (leave-one-out misfits, misfits.ts)
 * are dropped as single-sample artefacts of an exact interpolator and reported instead.
 */
import { InputError } from '../errors.ts';
import { pointEnvelope } from '../interp/envelope.ts';
import { ZONE_NAMES } from '../petrology/index.ts';
import { BOUNDARY_COUNT, IndicatorField, type LocalGrid } from './indicator.ts';
import { addBandWidths, disagreeingSamples, isogradName, isolatedLoopSamples, lineLength, lineSupport } from './isograd-lines.ts';
import { traceIsolines } from './isolines.ts';
import { leaveOneOut, type LeaveOneOut } from './misfits.ts';
import type { SampleGrade } from './grade.ts';
import type { VariogramModel } from '../interp/variogram.ts';

export { isogradName } from './isograd-lines.ts';

export interface IsogradGridOptions {
  /** Grid cell, km (default 1). */
  cellKm?: number;
  /** Grid size [columns, rows] instead of the data envelope (the cell is kept). */
  gridSize?: [number, number];
  /** 'kriging' (default: indicator kriging) or 'idw'. */
  method?: 'kriging' | 'idw';
  /** Indicator variogram for every isograd instead of fitting one per isograd (kriging). */
  variogram?: VariogramModel;
  /** IDW power (default 2); neighbours (default 16 for kriging, 12 for IDW). */
  power?: number;
  neighbors?: number;
  /** Lines are drawn only where the nearest visible sample is within this distance, km (default: see `defaultSupportKm`). */
  supportKm?: number;
  /** Radius for the support counts on each line, km (default 5). */
  supportRadiusKm?: number;
  /** Drop closed loops around one or two contradicted samples (default true). */
  dropIsolatedLoops?: boolean;
  /** Largest grid, cells (default 4,000,000). */
  maxCells?: number;
}

/** Probability levels traced for each isograd: the band's edges and the isograd itself. */
export const ISOGRAD_PROBABILITIES = [0.1, 0.5, 0.9] as const;

export interface IsogradLineKm {
  /** Rank of the zone the isograd opens (1 = biotite … 5 = sillimanite). */
  rank: number;
  /** Probability level of the line: 0.5 is the isograd; 0.1 and 0.9 bound the band where it may lie. */
  probability: number;
  /** For a 0.5 line: the band's width (distance to the nearest 0.1 line plus to the nearest 0.9 line of the same
   * isograd), km, at points about every 2 km along it (null where an edge of the band is not drawn within reach). */
  bandWidthKm?: { alongKm: number[]; widthKm: (number | null)[]; median: number | null; min: number | null; max: number | null };
  mineral: string;
  /** e.g. "garnet-in". */
  isograd: string;
  /** Vertices, flat [x, y, ...] local km; the higher grade is on the right. */
  coords: Float64Array;
  closed: boolean;
  lengthKm: number;
  support: { radiusKm: number; samplesNearMidpoint: number; meanSamplesPerVertex: number; minSamplesPerVertex: number };
}

export interface IsogradResultKm {
  grid: LocalGrid;
  field: IndicatorField;
  /** Indicator grids, boundary-major (see IndicatorField.grid), unsupported cells NaN. */
  indicators: Float32Array;
  nearestKm: Float32Array;
  supportKm: number;
  lines: IsogradLineKm[];
  loo: LeaveOneOut;
  droppedLoops: { isograd: string; samples: string[] }[];
  /** Per isograd: decided samples whose side disagrees with their leave-one-out probability of lying at or above it. */
  disagreeing: { isograd: string; samples: { id: string; index: number; says: 'at or above' | 'below'; probability: number }[] }[];
  warnings: string[];
  timingsMs: Record<string, number>;
}

/** Median distance (km) from each point to its nearest other point. */
export function medianSpacingKm(field: IndicatorField): number {
  const n = field.count;
  if (n < 2) return NaN;
  const ids = new Int32Array(2),
    d2 = new Float64Array(2);
  const d = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const m = field.index.nearest(field.x[i], field.y[i], 1, Infinity, ids, d2, null, i);
    d[i] = m > 0 ? Math.sqrt(d2[0]) : NaN;
  }
  d.sort();
  return d[Math.floor((n - 1) / 2)];
}

/**
 * Default support distance (km): 2.5 × the median nearest-neighbour spacing of the samples, at least two cells —
 * a project choice: far enough to join samples along a traverse, near enough not to draw lines into empty ground.
 */
export function defaultSupportKm(field: IndicatorField, cellKm: number): number {
  const s = medianSpacingKm(field);
  return Math.max(2 * cellKm, Number.isFinite(s) ? 2.5 * s : 0);
}

const now = () => (typeof performance !== 'undefined' ? performance.now() : Date.now());

/** The isograd grid: over the samples' envelope padded by the support distance, or `gridSize` cells about its centre. */
function isogradGrid(field: IndicatorField, cellKm: number, supportKm: number, opts: IsogradGridOptions): LocalGrid {
  let { x0, x1, y0, y1 } = pointEnvelope(field.x, field.y);
  let width: number, height: number;
  if (opts.gridSize !== undefined) {
    [width, height] = opts.gridSize;
    const cx = (x0 + x1) / 2,
      cy = (y0 + y1) / 2;
    x0 = cx - ((width - 1) * cellKm) / 2;
    y0 = cy - ((height - 1) * cellKm) / 2;
  } else {
    x0 -= supportKm;
    y0 -= supportKm;
    x1 += supportKm;
    y1 += supportKm;
    width = Math.max(2, Math.ceil((x1 - x0) / cellKm) + 1);
    height = Math.max(2, Math.ceil((y1 - y0) / cellKm) + 1);
  }
  const maxCells = opts.maxCells ?? 4_000_000;
  if (!(Number.isInteger(width) && width >= 2 && Number.isInteger(height) && height >= 2))
    throw new InputError(
      `grid size must be whole numbers ≥ 2, got ${width} × ${height}`,
      [{ field: 'gridSize', problem: 'expected e.g. 500x500' }],
      'bad_option',
    );
  if (width * height > maxCells)
    throw new InputError(
      `the isograd grid would have ${(width * height).toLocaleString('en')} cells (${width} × ${height}), above the limit of ${maxCells.toLocaleString('en')}`,
      [{ field: 'cellKm', problem: 'use a larger cell' }],
      'grid_too_large',
    );
  return { x0, y0, cellKm, width, height };
}

/** Grid edges that cross a fault (tested only near one: within 1.5 cells); [2i] the edge to the right, [2i + 1] up. */
function blockedEdges(field: IndicatorField, grid: LocalGrid, faultDist: Float32Array): Uint8Array | null {
  const b = field.barrier;
  if (b === null) return null;
  const { x0, y0, cellKm, width, height } = grid;
  const blocked = new Uint8Array(2 * width * height);
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      const i = r * width + c;
      if (!(faultDist[i] <= 1.5 * cellKm)) continue;
      const px = x0 + c * cellKm,
        py = y0 + r * cellKm;
      if (c + 1 < width && b.blocks(px, py, px + cellKm, py)) blocked[2 * i] = 1;
      if (r + 1 < height && b.blocks(px, py, px, py + cellKm)) blocked[2 * i + 1] = 1;
    }
  }
  return blocked;
}

/** The 0.1, 0.5 and 0.9 lines of every isograd, without the closed loops around contradicted samples (listed instead). */
function traceIsogradLines(
  indicators: Float32Array,
  grid: LocalGrid,
  blocked: Uint8Array | null,
  field: IndicatorField,
  loo: LeaveOneOut,
  grades: readonly SampleGrade[],
  opts: IsogradGridOptions,
): { lines: IsogradLineKm[]; droppedLoops: IsogradResultKm['droppedLoops'] } {
  const N = grid.width * grid.height;
  const radiusKm = opts.supportRadiusKm ?? 5;
  const lines: IsogradLineKm[] = [];
  const droppedLoops: IsogradResultKm['droppedLoops'] = [];
  const dropLoops = opts.dropIsolatedLoops ?? true;
  for (let j = 1; j <= BOUNDARY_COUNT; j++)
    for (const level of ISOGRAD_PROBABILITIES) {
      for (const l of traceIsolines(indicators, grid, level, blocked, (j - 1) * N)) {
        const inside = l.closed && dropLoops ? isolatedLoopSamples(l.coords, field, loo, j) : null;
        if (inside !== null) {
          if (level === 0.5) droppedLoops.push({ isograd: isogradName(j), samples: inside.map((i) => grades[field.source[i]].id) });
          continue;
        }
        const c = l.coords;
        lines.push({
          rank: j,
          probability: level,
          mineral: ZONE_NAMES[j],
          isograd: isogradName(j),
          coords: c,
          closed: l.closed,
          lengthKm: lineLength(c),
          support: lineSupport(c, field, radiusKm, grid.cellKm),
        });
      }
    }
  return { lines, droppedLoops };
}

/**
 * Isograds of graded samples at local km positions (x, y), with fault pieces (x1, y1, x2, y2 km) as barriers.
 * Returns the lines in local km plus the grids, the indicator field and the leave-one-out predictions.
 */
export function computeIsogradsKm(
  x: Float64Array,
  y: Float64Array,
  grades: readonly SampleGrade[],
  faults: Float64Array | null,
  opts: IsogradGridOptions = {},
): IsogradResultKm {
  const t0 = now();
  const warnings: string[] = [];
  const cellKm = opts.cellKm ?? 1;
  if (!(cellKm > 0 && Number.isFinite(cellKm)))
    throw new InputError(`cell size must be > 0 km, got ${cellKm}`, [{ field: 'cellKm', problem: 'expected a positive number of km' }], 'bad_option');
  const lo = Int8Array.from(grades, (g) => g.lo),
    hi = Int8Array.from(grades, (g) => g.hi);
  const field = new IndicatorField(x, y, lo, hi, {
    method: opts.method,
    variogram: opts.variogram,
    power: opts.power,
    neighbors: opts.neighbors,
    faults,
  });
  if (field.count < 2)
    throw new InputError(
      `isograds need at least two samples with zone information, got ${field.count}`,
      [{ field: 'samples', problem: 'give samples with a zone, a facies on the Barrovian sequence, or peak P–T' }],
      'too_few_points',
    );
  const supportKm = opts.supportKm ?? defaultSupportKm(field, cellKm);
  if (!(supportKm > 0))
    throw new InputError(`support distance must be > 0 km, got ${supportKm}`, [{ field: 'supportKm', problem: 'expected > 0' }], 'bad_option');
  const grid = isogradGrid(field, cellKm, supportKm, opts);
  const N = grid.width * grid.height;

  const indicators = new Float32Array(BOUNDARY_COUNT * N);
  const nearestKm = new Float32Array(N);
  let faultDist: Float32Array | undefined;
  if (field.barrier !== null) {
    faultDist = new Float32Array(N);
    field.faultDistanceGrid(grid, field.faultCapKm(grid), faultDist);
  }
  const t1 = now();
  field.grid(grid, indicators, nearestKm, faultDist);
  const t2 = now();
  const blocked = faultDist !== undefined ? blockedEdges(field, grid, faultDist) : null;
  // Unsupported cells are no data.
  for (let i = 0; i < N; i++) if (!(nearestKm[i] <= supportKm)) for (let j = 0; j < BOUNDARY_COUNT; j++) indicators[j * N + i] = NaN;

  const loo = leaveOneOut(field);
  const t3 = now();
  const { lines, droppedLoops } = traceIsogradLines(indicators, grid, blocked, field, loo, grades, opts);
  addBandWidths(lines, supportKm);
  const disagreeing = disagreeingSamples(field, loo, grades);
  if (droppedLoops.length > 0)
    warnings.push(`${droppedLoops.length} closed loop(s) around single contradicted samples were not drawn (the samples are listed as misfits)`);
  const t4 = now();
  return {
    grid,
    field,
    indicators,
    nearestKm,
    supportKm,
    lines,
    loo,
    droppedLoops,
    disagreeing,
    warnings,
    timingsMs: { setup: t1 - t0, indicatorGrids: t2 - t1, leaveOneOut: t3 - t2, lines: t4 - t3 },
  };
}
