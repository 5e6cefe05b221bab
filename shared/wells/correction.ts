import { EMPIRICAL_BHT, harrisonCorrectionC, waplesTemperatureC } from '../heatflow/bht-empirical.ts';
import { hornerFit } from './horner.ts';
import type { BhtCorrection, CorrectedPoint, MeasurementInput, WellFlag } from './types.ts';

/**
 * Default one-sigma uncertainties of a corrected temperature (°C). These are this project's choices, set from
 * the usual spread of each kind of reading (common practice, no single source):
 * - `log`: an equilibrated temperature log, 0.5 °C;
 * - `test`: a flow- or drill-stem-test temperature, 1 °C;
 * - `bhtNone`: a BHT used as read, 10 °C (BHTs typically read 5–20 °C below the formation; from memory);
 * - `bhtOffset`, `bhtPoly`: a BHT with a user correction or a published empirical one, 6 °C unless the user gives `sdC`;
 * - `hornerFloor`: added in quadrature to the Horner intercept's standard error, 3 °C (the line-source model
 *   itself is approximate, and three points give one degree of freedom).
 */
export const DEFAULT_SD_C = { log: 0.5, test: 1.0, bhtNone: 10, bhtOffset: 6, bhtPoly: 6, hornerFloor: 3 } as const;

/** BHTs whose depths lie within this distance (m) of the shallowest of their group count as one depth for Horner. */
export const HORNER_DEPTH_TOLERANCE_M = 50;

/** Two points closer than this (m) are "at the same depth" for the duplicate-depth flag. */
export const SAME_DEPTH_M = 0.5;

/** What a Horner group did. */
export interface HornerGroup {
  depthM: number;
  /** Indices of the measurements fitted. */
  sources: number[];
  temperatureC: number;
  seTemperatureC: number;
  slopeC: number;
  /** True when the fit was used; false when it was rejected (see `reason`) and the user correction applied. */
  accepted: boolean;
  reason?: string;
}

export interface CorrectionResult {
  /** One point per measurement, except that a Horner group becomes one point (its members share it). */
  points: CorrectedPoint[];
  horner: HornerGroup[];
  flags: WellFlag[];
}

/** Options of `correctMeasurements`. */
export interface CorrectionOptions {
  bht: BhtCorrection;
  /** Depth tolerance (m) for grouping BHTs; default HORNER_DEPTH_TOLERANCE_M. */
  hornerToleranceM?: number;
  /** Mean surface temperature (°C), needed by the waples2004 correction. */
  surfaceTemperatureC?: number;
}

/** A corrected BHT: the value, its σ (°C), the method actually applied and measurement flags. */
export interface CorrectedBht {
  temperatureC: number;
  sdC: number;
  method: BhtCorrection['method'];
  flags: string[];
}

/**
 * Applies the chosen BHT correction to one BHT: none (T), a constant offset (T + C), a depth polynomial
 * T + Σ aᵢ·zKm^i whose coefficients and source the user supplies, or a published empirical correction
 * (harrison1983 by depth; waples2004 by time since circulation and depth, which needs `hoursSinceCirculation` and
 * the surface temperature, else the BHT stays uncorrected and is flagged `empirical-needs-time`). A BHT outside the
 * empirical correction's calibrated depths is flagged `empirical-extrapolated`.
 */
export function correctBht(
  depthM: number,
  temperatureC: number,
  c: BhtCorrection,
  ctx: { hoursSinceCirculation?: number; surfaceTemperatureC?: number } = {},
): CorrectedBht {
  if (c.method === 'none') return { temperatureC, sdC: c.sdC ?? DEFAULT_SD_C.bhtNone, method: 'none', flags: ['uncorrected-bht'] };
  if (c.method === 'offset') return { temperatureC: temperatureC + c.offsetC, sdC: c.sdC ?? DEFAULT_SD_C.bhtOffset, method: 'offset', flags: [] };
  if (c.method === 'poly') {
    const z = depthM / 1000;
    // Horner's rule for Σ aᵢ zⁱ.
    let d = 0;
    for (let i = c.coefficients.length - 1; i >= 0; i--) d = d * z + c.coefficients[i];
    return { temperatureC: temperatureC + d, sdC: c.sdC ?? DEFAULT_SD_C.bhtPoly, method: 'poly', flags: [] };
  }
  const [lo, hi] = EMPIRICAL_BHT[c.method].calibratedDepthM;
  const flags = depthM < lo || depthM > hi ? ['empirical-extrapolated'] : [];
  if (c.method === 'harrison1983')
    return { temperatureC: temperatureC + harrisonCorrectionC(depthM), sdC: c.sdC ?? DEFAULT_SD_C.bhtPoly, method: c.method, flags };
  const tsc = ctx.hoursSinceCirculation,
    ts = ctx.surfaceTemperatureC;
  if (tsc === undefined || !Number.isFinite(tsc) || ts === undefined || !Number.isFinite(ts)) {
    return { temperatureC, sdC: DEFAULT_SD_C.bhtNone, method: 'none', flags: ['uncorrected-bht', 'empirical-needs-time'] };
  }
  return { temperatureC: waplesTemperatureC(temperatureC, ts, tsc, depthM), sdC: c.sdC ?? DEFAULT_SD_C.bhtPoly, method: c.method, flags };
}

function hasTimes(m: MeasurementInput): boolean {
  return Number.isFinite(m.hoursSinceCirculation) && Number.isFinite(m.circulationHours);
}

/**
 * Turns one well's measurements into corrected temperature points.
 * - Logs and tests are taken as formation temperatures ('equilibrium').
 * - BHTs are grouped by depth (each group spans at most `hornerToleranceM` from its shallowest member). A group
 *   with three or more BHTs that carry both `circulationHours` and `hoursSinceCirculation`, at three or more
 *   distinct Horner abscissae, is extrapolated by the Horner method (`hornerFit`) to one point at the group's mean
 *   depth; σ = √(SE² + hornerFloor²). The fit is rejected (and the user correction applied) when its slope C is
 *   not positive, i.e. the readings do not warm with shut-in time. Untimed BHTs of a Horner group are
 *   superseded by it (kept in the report, left out of the fit, flagged).
 * - Every other BHT gets the user's correction (`correctBht`).
 * Exact duplicate rows are kept in the report but only the first enters the fit (flag `duplicate-row`); distinct
 * readings at one depth all enter the fit, flagged `duplicate-depth`.
 */
export function correctMeasurements(ms: MeasurementInput[], opts: CorrectionOptions): CorrectionResult {
  const tol = opts.hornerToleranceM ?? HORNER_DEPTH_TOLERANCE_M;
  if (!(tol >= 0)) throw new RangeError('hornerToleranceM must be ≥ 0 (m)');
  const out: Corrected = { points: [], horner: [], flags: [], handled: new Set<number>() };
  const duplicateOf = duplicateRows(ms, out.flags);
  for (const g of bhtDepthGroups(ms, duplicateOf, tol)) if (g.length >= 3) hornerGroup(ms, g, opts, out);
  ms.forEach((m, i) => {
    if (!out.handled.has(i)) out.points.push(singlePoint(m, i, duplicateOf[i] >= 0, opts));
  });
  out.points.sort((a, b) => a.depthM - b.depthM || a.sources[0] - b.sources[0]);
  flagSameDepth(out.points, out.flags);
  return { points: out.points, horner: out.horner, flags: out.flags };
}

/** What the correction builds up: the points, the Horner groups, the well's flags and the measurements already used. */
interface Corrected extends CorrectionResult {
  handled: Set<number>;
}

/** For each measurement, the index of the earlier row it repeats exactly (−1 when none); flags the repeats. */
function duplicateRows(ms: MeasurementInput[], flags: WellFlag[]): Int32Array {
  const duplicateOf = new Int32Array(ms.length).fill(-1);
  const key = (m: MeasurementInput) => `${m.kind}|${m.depthM}|${m.temperatureC}|${m.hoursSinceCirculation ?? ''}|${m.circulationHours ?? ''}`;
  const firstByKey = new Map<string, number>();
  ms.forEach((m, i) => {
    const k = key(m);
    const first = firstByKey.get(k);
    if (first === undefined) firstByKey.set(k, i);
    else duplicateOf[i] = first;
  });
  const dups = [...duplicateOf].map((d, i) => (d >= 0 ? `${i} (= ${d})` : '')).filter(Boolean);
  if (dups.length > 0)
    flags.push({
      code: 'duplicate-row',
      message: `measurement${dups.length === 1 ? '' : 's'} ${dups.join(', ')} repeat an earlier row exactly and are left out of the fit`,
    });
  return duplicateOf;
}

/** BHT depth groups (duplicates excluded): indices by depth, each group spanning at most tol m from its shallowest. */
function bhtDepthGroups(ms: MeasurementInput[], duplicateOf: Int32Array, tol: number): number[][] {
  const bhts = ms
    .map((_, i) => i)
    .filter((i) => ms[i].kind === 'bht' && duplicateOf[i] < 0)
    .sort((a, b) => ms[a].depthM - ms[b].depthM);
  const groups: number[][] = [];
  for (const i of bhts) {
    const g = groups[groups.length - 1];
    if (g && ms[i].depthM - ms[g[0]].depthM <= tol) g.push(i);
    else groups.push([i]);
  }
  return groups;
}

/**
 * One depth group of three or more BHTs: its Horner point when the times allow a fit with a positive slope (the
 * group's untimed BHTs kept as superseded), else a flag saying why the user's correction is used instead.
 */
function hornerGroup(ms: MeasurementInput[], g: number[], opts: CorrectionOptions, out: Corrected): void {
  const { points, horner, flags, handled } = out;
  const timed = g.filter((i) => hasTimes(ms[i]));
  const xs = new Set(
    timed.map((i) => Math.log10(((ms[i].circulationHours as number) + (ms[i].hoursSinceCirculation as number)) / (ms[i].hoursSinceCirculation as number))),
  );
  const depthLabel = `${Math.round(ms[g[0]].depthM)}–${Math.round(ms[g[g.length - 1]].depthM)} m`;
  if (timed.length < 3 || xs.size < 3) {
    const missing = g
      .filter((i) => !hasTimes(ms[i]))
      .map((i) => `${i} (${ms[i].circulationHours === undefined ? 'circulationHours' : 'hoursSinceCirculation'})`);
    flags.push({
      code: 'horner-times-missing',
      message: `${g.length} BHTs at ${depthLabel} could be Horner-corrected but ${missing.length > 0 ? `measurements ${missing.join(', ')} lack times` : 'their times give fewer than three distinct Horner abscissae'}; the ${opts.bht.method} correction was used instead`,
    });
    return;
  }
  const fit = hornerFit(
    timed.map((i) => ms[i].circulationHours as number),
    timed.map((i) => ms[i].hoursSinceCirculation as number),
    timed.map((i) => ms[i].temperatureC),
  );
  const depthM = timed.reduce((s, i) => s + ms[i].depthM, 0) / timed.length;
  if (fit === null || !(fit.slopeC > 0)) {
    horner.push({
      depthM,
      sources: timed,
      temperatureC: fit?.temperatureC ?? NaN,
      seTemperatureC: fit?.seTemperatureC ?? NaN,
      slopeC: fit?.slopeC ?? NaN,
      accepted: false,
      reason: 'the BHTs do not rise with time since circulation (Horner slope ≤ 0)',
    });
    flags.push({
      code: 'horner-rejected',
      message: `Horner fit at ${depthLabel} rejected: the BHTs do not rise with time since circulation; the ${opts.bht.method} correction was used instead`,
    });
    return;
  }
  const se = Number.isFinite(fit.seTemperatureC) ? fit.seTemperatureC : 0;
  horner.push({ depthM, sources: timed, temperatureC: fit.temperatureC, seTemperatureC: fit.seTemperatureC, slopeC: fit.slopeC, accepted: true });
  const raw = Math.max(...timed.map((i) => ms[i].temperatureC));
  const pFlags: string[] = [];
  if (fit.temperatureC - raw > 50) pFlags.push('horner-large-extrapolation');
  points.push({
    sources: timed,
    depthM,
    rawTemperatureC: raw,
    temperatureC: fit.temperatureC,
    sdC: Math.hypot(se, DEFAULT_SD_C.hornerFloor),
    kind: 'bht',
    method: 'horner',
    flags: pFlags,
    used: true,
  });
  if (pFlags.length > 0)
    flags.push({
      code: 'horner-large-extrapolation',
      message: `Horner T∞ at ${depthLabel} is ${(fit.temperatureC - raw).toFixed(1)} °C above the warmest BHT`,
    });
  for (const i of timed) handled.add(i);
  for (const i of g) {
    if (handled.has(i)) continue;
    handled.add(i);
    const m = ms[i];
    points.push({
      sources: [i],
      depthM: m.depthM,
      rawTemperatureC: m.temperatureC,
      temperatureC: m.temperatureC,
      sdC: DEFAULT_SD_C.bhtNone,
      kind: 'bht',
      method: 'none',
      flags: ['superseded-by-horner'],
      used: false,
    });
  }
}

/** A measurement on its own: a BHT with the user's correction, a log or test as a formation temperature. */
function singlePoint(m: MeasurementInput, i: number, dup: boolean, opts: CorrectionOptions): CorrectedPoint {
  const c =
    m.kind === 'bht'
      ? correctBht(m.depthM, m.temperatureC, opts.bht, { hoursSinceCirculation: m.hoursSinceCirculation, surfaceTemperatureC: opts.surfaceTemperatureC })
      : { temperatureC: m.temperatureC, sdC: m.kind === 'log' ? DEFAULT_SD_C.log : DEFAULT_SD_C.test, method: 'equilibrium' as const, flags: [] };
  return {
    sources: [i],
    depthM: m.depthM,
    rawTemperatureC: m.temperatureC,
    temperatureC: c.temperatureC,
    sdC: c.sdC,
    kind: m.kind,
    method: c.method,
    flags: dup ? ['duplicate-row'] : c.flags,
    used: !dup,
  };
}

/** Repeated readings at one depth (within SAME_DEPTH_M) are kept (they weigh in the fit) but flagged. */
function flagSameDepth(points: CorrectedPoint[], flags: WellFlag[]): void {
  let sameDepth = 0;
  for (let a = 0; a < points.length; a++) {
    if (!points[a].used) continue;
    for (let b = a + 1; b < points.length && points[b].depthM - points[a].depthM < SAME_DEPTH_M; b++) {
      if (!points[b].used) continue;
      for (const p of [points[a], points[b]])
        if (!p.flags.includes('duplicate-depth')) {
          p.flags.push('duplicate-depth');
          sameDepth++;
        }
    }
  }
  if (sameDepth > 0)
    flags.push({
      code: 'duplicate-depth',
      message: `${sameDepth} corrected points share a depth (within ${SAME_DEPTH_M} m) with another; all are kept in the fit`,
    });
}
