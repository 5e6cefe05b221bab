/**
 * Surface heat flow from a well.
 *
 * A straight line fitted to temperatures over an interval gives the gradient near the interval's middle (for a
 * temperature profile that is quadratic in depth, the least-squares slope over points symmetric about the centre
 * equals the derivative at the centre), so gradient × conductivity is the heat flow at mid-interval, q(z_mid), not at
 * the surface. With heat production A(z) above, steady conduction gives q0 = q(z) + ∫₀^z A dz (Turcotte & Schubert
 * 2002, §4-6: dq/dz = −A), so the surface heat flow is the interval value plus the heat produced above z_mid.
 *
 * With a thermal model, q0 can also be fitted directly: the model's closed-form layered geotherm (its k(T) and A(z),
 * shared/thermal) is a function T(z; q0, T0), and q0 (with T0 when the fit is not anchored at the surface
 * temperature) minimises Σ wᵢ·(Tᵢ − T(zᵢ; q0, T0))², wᵢ = 1/σᵢ², by Gauss–Newton with a central-difference Jacobian.
 */

/** Heat produced between the surface and zM (m) by a heat-production column (µW/m³ over m → mW/m²). */
export function columnHeatAboveMWm2(
  column: { topM: number; bottomM: number; heatProductionUWm3: number }[],
  zM: number,
): { heatMWm2: number; coveredM: number } {
  let heat = 0,
    covered = 0;
  for (const c of column) {
    const a = Math.max(0, c.topM),
      b = Math.min(c.bottomM, zM);
    if (b > a) {
      heat += (c.heatProductionUWm3 * (b - a)) / 1000; // µW/m³ × km = mW/m²
      covered += b - a;
    }
  }
  return { heatMWm2: heat, coveredM: covered };
}

/** A model geotherm at a surface heat flow and surface temperature: writes T (°C) at depthsKm into out. */
export type ModelGeotherm = (depthsKm: Float64Array, q0: number, t0: number, out: Float64Array) => Float64Array;

export interface SurfaceFit {
  /** Fitted surface heat flow, mW/m². */
  heatFlowMWm2: number;
  /** Standard error from the temperature weights (scaled by √χ²ᵣ when above 1), mW/m². */
  seMWm2: number;
  /** Surface temperature used (fitted when not anchored), °C. */
  surfaceTemperatureC: number;
  anchored: boolean;
  /** RMS residual of the used points, °C. */
  rmsC: number;
  nPoints: number;
  iterations: number;
  method: string;
}

/**
 * Fits q0 (and T0 unless `anchorC` is given) to temperatures with a model geotherm; points with a NaN model
 * temperature (below the model's valid depth) are left out. Returns null with fewer points than unknowns.
 */
export function fitSurfaceHeatFlow(
  points: { depthM: number; temperatureC: number; sdC: number; used: boolean }[],
  geotherm: ModelGeotherm,
  start: { q0: number; t0: number },
  anchorC?: number,
): SurfaceFit | null {
  const use = points.filter((p) => p.used && Number.isFinite(p.temperatureC) && p.sdC > 0);
  const nUnknown = anchorC === undefined ? 2 : 1;
  if (use.length < nUnknown) return null;
  const n = use.length;
  const sys: LinearisedSystem = {
    geotherm,
    z: Float64Array.from(use, (p) => p.depthM / 1000),
    w: Float64Array.from(use, (p) => 1 / (p.sdC * p.sdC)),
    obs: Float64Array.from(use, (p) => p.temperatureC),
    t: new Float64Array(n),
    anchored: anchorC !== undefined,
  };
  let q = start.q0 > 0 ? start.q0 : 60,
    t0 = anchorC ?? start.t0;
  let it = 0,
    ne: NormalEquations = { a11: 0, a12: 0, a22: 0, b1: 0, b2: 0 };
  for (; it < 50; it++) {
    ne = normalEquations(sys, q, t0);
    const step = solveStep(ne, sys.anchored);
    if (step === null) return null;
    let sq = step.sq;
    // Keep q0 positive: halve a step that would cross zero.
    while (q + sq <= 0) sq /= 2;
    q += sq;
    t0 += step.st0;
    if (Math.abs(sq) < 1e-9 && Math.abs(step.st0) < 1e-9) break;
  }
  geotherm(sys.z, q, t0, sys.t);
  let chi2 = 0,
    s2 = 0,
    m = 0;
  for (let i = 0; i < n; i++) {
    const r = sys.obs[i] - sys.t[i];
    if (!Number.isFinite(r)) continue;
    chi2 += sys.w[i] * r * r;
    s2 += r * r;
    m++;
  }
  if (m < nUnknown) return null;
  const { a11, a12, a22 } = ne;
  const varQ = anchorC === undefined ? a22 / (a11 * a22 - a12 * a12) : 1 / a11;
  const dof = m - nUnknown;
  const red = dof > 0 ? chi2 / dof : 1;
  return {
    heatFlowMWm2: q,
    seMWm2: Math.sqrt(varQ * Math.max(1, red)),
    surfaceTemperatureC: t0,
    anchored: anchorC !== undefined,
    rmsC: Math.sqrt(s2 / m),
    nPoints: m,
    iterations: it + 1,
    method: `weighted least squares of the temperatures on the model geotherm T(z; q0${anchorC === undefined ? ', T0' : ''}) (closed-form layered conduction with the model's k(T) and A(z)), Gauss–Newton`,
  };
}

/** The fit's data: depths (km), weights 1/σ², observed temperatures, a buffer for the model's, and whether T0 is fixed. */
interface LinearisedSystem {
  geotherm: ModelGeotherm;
  z: Float64Array;
  w: Float64Array;
  obs: Float64Array;
  t: Float64Array;
  anchored: boolean;
}

/** JᵀWJ (a11, a12, a22) and JᵀWr (b1, b2) of the linearised problem, J's columns ∂T/∂q0 and ∂T/∂T0. */
interface NormalEquations {
  a11: number;
  a12: number;
  a22: number;
  b1: number;
  b2: number;
}

/** Normal equations at (q0, T0), with ∂T/∂q0 by central and ∂T/∂T0 by forward differences (steps 1e-3). */
function normalEquations(sys: LinearisedSystem, q: number, t0: number): NormalEquations {
  const { geotherm, z, w, obs, t, anchored } = sys;
  const n = z.length;
  const dq = 1e-3,
    dt = 1e-3;
  const tp = new Float64Array(n),
    tm = new Float64Array(n),
    jt = new Float64Array(n);
  geotherm(z, q, t0, t);
  geotherm(z, q + dq, t0, tp);
  geotherm(z, q - dq, t0, tm);
  if (!anchored) {
    const tt = new Float64Array(n);
    geotherm(z, q, t0 + dt, tt);
    for (let i = 0; i < n; i++) jt[i] = (tt[i] - t[i]) / dt;
  }
  const ne: NormalEquations = { a11: 0, a12: 0, a22: 0, b1: 0, b2: 0 };
  for (let i = 0; i < n; i++) {
    const r = obs[i] - t[i];
    const jq = (tp[i] - tm[i]) / (2 * dq);
    if (!Number.isFinite(r) || !Number.isFinite(jq)) continue;
    ne.a11 += w[i] * jq * jq;
    ne.b1 += w[i] * jq * r;
    if (!anchored) {
      ne.a12 += w[i] * jq * jt[i];
      ne.a22 += w[i] * jt[i] * jt[i];
      ne.b2 += w[i] * jt[i] * r;
    }
  }
  return ne;
}

/** The Gauss–Newton step (Δq0, ΔT0) from the normal equations; null when they are singular. */
function solveStep({ a11, a12, a22, b1, b2 }: NormalEquations, anchored: boolean): { sq: number; st0: number } | null {
  if (anchored) return a11 > 0 ? { sq: b1 / a11, st0: 0 } : null;
  const det = a11 * a22 - a12 * a12;
  if (!(det > 0)) return null;
  return { sq: (a22 * b1 - a12 * b2) / det, st0: (a11 * b2 - a12 * b1) / det };
}
/**
 * Depth (m) whose gradient a weighted straight-line fit measures: for a profile T = a + b·z + c·z² (constant heat
 * production, Turcotte & Schubert 2002 §4-6) the weighted least-squares slope is b + c·cov_w(z, z²)/var_w(z), which
 * is the derivative 2c·z_ref + b at z_ref = cov_w(z, z²)/(2·var_w(z)) (the interval's middle for points symmetric
 * about it). The surface anchor counts as a point at z = 0 with σ = anchorSdC. Falls back to `fallbackM`.
 */
export function effectiveDepthM(points: { depthM: number; sdC: number; used: boolean }[], anchorSdC: number | undefined, fallbackM: number): number {
  let sw = 0,
    sz = 0,
    sz2 = 0,
    sz3 = 0;
  const add = (z: number, w: number) => {
    sw += w;
    sz += w * z;
    sz2 += w * z * z;
    sz3 += w * z * z * z;
  };
  for (const p of points) if (p.used && p.sdC > 0 && Number.isFinite(p.depthM)) add(p.depthM, 1 / (p.sdC * p.sdC));
  if (anchorSdC !== undefined && anchorSdC > 0) add(0, 1 / (anchorSdC * anchorSdC));
  if (!(sw > 0)) return fallbackM;
  const m1 = sz / sw,
    m2 = sz2 / sw,
    m3 = sz3 / sw;
  const varZ = m2 - m1 * m1,
    cov = m3 - m1 * m2;
  const z = varZ > 0 ? cov / (2 * varZ) : NaN;
  return Number.isFinite(z) && z >= 0 ? z : fallbackM;
}
