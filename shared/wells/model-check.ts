/**
 * A thermal model's temperature at given depths for a given surface heat flow: writes T (°C) for each depth (km)
 * into `out`. The wells path takes it as a function so that it stays independent of how the model is evaluated.
 */
export type ModelTemperature = (depthsKm: Float64Array, surfaceHeatFlowMWm2: number, out: Float64Array) => Float64Array;

export interface ModelResiduals {
  /** Surface heat flow the model was run at (mW/m²). */
  heatFlowMWm2: number;
  /** Model temperature at each point's depth (°C), aligned with the points. */
  modelC: number[];
  /** corrected − model (°C), aligned with the points. */
  residualC: number[];
  /** Mean and RMS of the residuals of the points in the fit (°C); NaN without any. */
  meanC: number;
  rmsC: number;
  nPoints: number;
}

/**
 * Compares corrected well temperatures with a model geotherm at one surface heat flow: the model temperature at
 * each measured depth, the residual corrected − model, and the mean and root-mean-square residual over the
 * points flagged `used` (the others are still listed). A positive mean means the well is warmer than the model.
 */
export function modelResiduals(
  points: { depthM: number; temperatureC: number; used: boolean }[],
  model: ModelTemperature,
  heatFlowMWm2: number,
): ModelResiduals {
  const z = new Float64Array(points.length);
  points.forEach((p, i) => (z[i] = p.depthM / 1000));
  const t = model(z, heatFlowMWm2, new Float64Array(points.length));
  const residualC: number[] = [];
  let s = 0;
  let s2 = 0;
  let n = 0;
  points.forEach((p, i) => {
    const r = p.temperatureC - t[i];
    residualC.push(r);
    if (p.used && Number.isFinite(r)) {
      s += r;
      s2 += r * r;
      n++;
    }
  });
  return { heatFlowMWm2, modelC: Array.from(t), residualC, meanC: n > 0 ? s / n : NaN, rmsC: n > 0 ? Math.sqrt(s2 / n) : NaN, nPoints: n };
}

/** Samples a model geotherm at `count` evenly spaced depths from 0 to `bottomM` (m) for a temperature–depth plot. */
export function modelGeotherm(model: ModelTemperature, heatFlowMWm2: number, bottomM: number, count = 41): { depthM: number; temperatureC: number }[] {
  if (!(bottomM > 0) || !(count >= 2)) throw new RangeError('modelGeotherm: bottomM must be > 0 m and count ≥ 2');
  const z = new Float64Array(count);
  for (let i = 0; i < count; i++) z[i] = (bottomM * i) / (count - 1) / 1000;
  const t = model(z, heatFlowMWm2, new Float64Array(count));
  return Array.from(z, (zk, i) => ({ depthM: zk * 1000, temperatureC: t[i] }));
}
