import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import type { Grid } from '../../shared/grid/grid.ts';
import { compileModel, nominalModel, type CompiledModel } from '../../shared/thermal/index.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { applyLayerOverride, overrideFromProperties } from '../../shared/products/overrides.ts';
import {
  allocateThermalGridBuffers,
  computeThermalGridRows,
  computeThermalGrids,
  planThermalGrids,
  type ThermalGridBuffers,
  type ThermalGridSpec,
} from '../../shared/products/thermal-grids.ts';
import { buildGeothermTable, tableCoverage, TABLE_TOLERANCE } from '../../shared/products/thermal-table.ts';

const demo = parseModelText(readFileSync(new URL('../../fixtures/demo/model.json', import.meta.url), 'utf8'), 'model.json').model;

function heatFlowGrid(width: number, height: number, f: (c: number, r: number) => number): Grid<Float32Array> {
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = f(c, r);
  return { width, height, values, west: 10, north: 50, dx: 0.01, dy: 0.01, crs: 'EPSG:4326', units: 'mW/m²' };
}

/** Half a Float32 step at |v| (the rounding of a grid value). */
const halfUlp = (v: number) => (v === 0 ? 0 : 2 ** (Math.floor(Math.log2(Math.abs(v))) - 24));

/** Root of f(z) = t on [lo, hi] by bisection to 1e-12 km (f increasing there: above the model bottom, 40 km). */
function rootOf(f: (z: number) => number, t: number, lo = 0, hi = 40): number {
  for (let i = 0; i < 200 && hi - lo > 1e-12; i++) {
    const m = 0.5 * (lo + hi);
    if (f(m) < t) lo = m;
    else hi = m;
  }
  return 0.5 * (lo + hi);
}

describe('thermal grids by a table over heat flow, against the closed forms', () => {
  // Zone 0: Turcotte & Schubert (2002) §4-8, exponential heat production, constant k (docs/sources.md#geotherm-exponential):
  // T(z) = T0 + qm·z/k + (A0·hr²/k)(1 − e^(−z/hr)), qm = q0 − A0·hr; T0 = 10, A0 = 2.5, hr = 10 km, k = 2.5.
  // Zone 1: uniform A = 1 with k(T) = k0/(1 + bT), k0 = 3, b = 1.5e-3, through the Kirchhoff transform (Chapman 1986,
  // docs/sources.md#conductivity-temperature): T(z) = [(1 + bT0)·e^(bθ) − 1]/b with θ = (q0·z − A·z²/2)/k0.
  const expo = compileModel(
    { surfaceTemperatureC: 10, layers: [{ bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 2.5, heatProductionDecayKm: 10, densityKgM3: 2700 }] },
    { maxDepthKm: 40 },
  );
  const kt = compileModel(
    { surfaceTemperatureC: 10, layers: [{ bottomKm: 40, conductivityWmK: 3, conductivityTempCoeffPerK: 1.5e-3, heatProductionUWm3: 1, densityKgM3: 2700 }] },
    { maxDepthKm: 40 },
  );
  const closed = [
    (q0: number, z: number) => 10 + ((q0 - 25) * z) / 2.5 + (250 / 2.5) * (1 - Math.exp(-z / 10)),
    (q0: number, z: number) => ((1 + 1.5e-3 * 10) * Math.exp((1.5e-3 * (q0 * z - (z * z) / 2)) / 3) - 1) / 1.5e-3,
  ];
  const W = 240,
    H = 240;
  // Heat flow 45–95 mW/m² over the grid (every cell its own value), 60 mW/m² exactly in cell 0; left half zone 0.
  const q = heatFlowGrid(W, H, (c, r) => (c === 0 && r === 0 ? 60 : 45 + (50 * (r * W + c)) / (W * H)));
  const zones = new Uint16Array(W * H);
  for (let i = 0; i < zones.length; i++) zones[i] = i % W < W / 2 ? 0 : 1;
  const spec: ThermalGridSpec = {
    heatFlow: q,
    models: [expo, kt],
    zones,
    isothermsC: [150, 300],
    depthsKm: [5, 10],
    maxDepthKm: 40,
    solidus: false,
    tableNodes: 512,
  };
  const out = computeThermalGrids(spec);

  it('reads all but a sliver of the range from the table: the heat flow where the melt onset enters the column is refined', () => {
    const plan = planThermalGrids(spec);
    // One interval of 511 in each zone changes status (melt onset above 40 km); its two finer tables leave < 1e-5 of the range.
    for (const t of plan.tables) expect(tableCoverage(t!)).toBeGreaterThan(1 - 1e-5);
  });

  it('gives T(5, 10 km) and the 150 / 300 °C depths of every cell within the stated tolerance of the closed form', () => {
    // Worst excess over tolerance + Float32 rounding, over every cell (one assertion each, not one per cell).
    let worstT = 0,
      worstZ = 0,
      excess = -Infinity;
    for (let i = 0; i < W * H; i++) {
      const T = (z: number) => closed[zones[i]](q.values[i], z);
      for (let k = 0; k < 2; k++) {
        const t = T([5, 10][k]);
        const e = Math.abs(out.temperatureC[k][i] - t);
        worstT = Math.max(worstT, e);
        excess = Math.max(excess, e - TABLE_TOLERANCE.temperatureC - halfUlp(t));
        const z = rootOf(T, [150, 300][k]);
        const d = Math.abs(out.isothermDepthKm[k][i] - z);
        worstZ = Math.max(worstZ, d);
        excess = Math.max(excess, d - TABLE_TOLERANCE.depthKm - halfUlp(z));
      }
    }
    expect(excess).toBeLessThanOrEqual(1e-9);
    // The cubic rule on these smooth columns is far inside the tolerance: Float32 rounding dominates.
    expect(worstT).toBeLessThan(1e-4);
    expect(worstZ).toBeLessThan(1e-5);
  }, 300_000);

  it('reproduces the published check values in a cell at q0 = 60 mW/m²', () => {
    // docs/sources.md#geotherm-exponential [derived]: 150 / 300 °C at 6.5627 / 15.1426 km; T(5, 10 km) = 119.347, 213.212 °C.
    expect(out.isothermDepthKm[0][0]).toBeCloseTo(6.5627, 4);
    expect(out.isothermDepthKm[1][0]).toBeCloseTo(15.1426, 4);
    expect(out.temperatureC[0][0]).toBeCloseTo(119.347, 3);
    expect(out.temperatureC[1][0]).toBeCloseTo(213.212, 3);
  });

  it('gives the basal heat flow q0 − ∫A dz exactly as the balance says (Turcotte & Schubert 2002 §4-8: A0·hr·(1 − e^(−40/10)))', () => {
    for (const i of [0, 1, 77, W * H - 1 - W / 2 - 3]) {
      const produced = zones[i] === 0 ? 2.5 * 10 * (1 - Math.exp(-4)) : 1 * 40;
      expect(Math.abs(out.baseHeatFlowMWm2[i] - (q.values[i] - produced))).toBeLessThanOrEqual(TABLE_TOLERANCE.heatFlowMWm2 + halfUlp(q.values[i]) * 2);
    }
  });
});

/** Largest difference of a grid at the sample cells from the sample's own solve, and the cells where only one is missing. */
function compare(a: Float32Array, b: Float32Array, cells: number[]): { worst: number; worstRel: number; missingDiffer: number } {
  let worst = 0,
    worstRel = 0,
    missingDiffer = 0;
  for (let k = 0; k < cells.length; k++) {
    const u = a[cells[k]],
      v = b[k];
    if (Number.isNaN(u) !== Number.isNaN(v)) missingDiffer++;
    else if (!Number.isNaN(u)) {
      worst = Math.max(worst, Math.abs(u - v));
      worstRel = Math.max(worstRel, Math.abs(u - v) - 2 * halfUlp(v));
    }
  }
  return { worst, worstRel, missingDiffer };
}

describe('thermal grids by a table over heat flow, against the per-cell solve (consistency check)', () => {
  // The demo model (melt onset, lithosphere base, layer boundaries inside the range) with an override zone; the
  // per-cell solve is checked against published solutions in thermal-geotherm.test.ts and products-thermal.test.ts.
  const hot = applyLayerOverride(demo, overrideFromProperties({ layers: [{ name: 'upper crust', heatProductionUWm3: 3.2 }] }, 'hot')!);
  const models: CompiledModel[] = [demo, hot].map((m) => compileModel(nominalModel(m), { maxDepthKm: 60 }));
  const W = 300,
    H = 300;
  const q = heatFlowGrid(W, H, (c, r) =>
    (c * 7 + r * 13) % 97 === 0 ? NaN : 35 + 70 * (0.5 + 0.5 * Math.sin(c / 23) * Math.cos(r / 31)) + 0.01 * ((c * 31 + r * 17) % 11),
  );
  const zones = new Uint16Array(W * H);
  for (let i = 0; i < zones.length; i++) zones[i] = Math.floor(i / W) > H / 2 && i % W > W / 3 ? 1 : 0;
  const base: ThermalGridSpec = { heatFlow: q, models, zones, isothermsC: [300, 500], depthsKm: [5, 10], faciesDepthKm: 12, maxDepthKm: 60 };
  const table = computeThermalGrids({ ...base, tableNodes: 1024 });
  // Every 7th cell solved one by one: the sample covers both zones, no-data cells and the whole heat-flow range.
  const sample = Array.from({ length: Math.floor((W * H) / 7) }, (_, k) => k * 7);
  const exact = computeThermalGrids({
    ...base,
    heatFlow: heatFlowGrid(sample.length, 1, (c) => q.values[sample[c]]),
    zones: Uint16Array.from(sample, (i) => zones[i]),
    tableNodes: null,
  });

  it('uses the table for nearly all of the range', () => {
    const plan = planThermalGrids({ ...base, tableNodes: 1024 });
    for (const t of plan.tables) expect(tableCoverage(t!)).toBeGreaterThan(0.999);
  });

  it('agrees with the per-cell solve within the stated tolerances, with the same status bits, facies and missing cells', () => {
    const grids: [keyof ThermalGridBuffers, number][] = [
      ['baseHeatFlowMWm2', TABLE_TOLERANCE.heatFlowMWm2],
      ['solidusDepthKm', TABLE_TOLERANCE.depthKm],
      ['meltOnsetKm', TABLE_TOLERANCE.depthKm],
      ['facies', 0],
      ['inconsistent', 0],
    ];
    const pairs: [Float32Array, Float32Array, number][] = [
      ...table.isothermDepthKm.map((g, k): [Float32Array, Float32Array, number] => [g, exact.isothermDepthKm[k], TABLE_TOLERANCE.depthKm]),
      ...table.temperatureC.map((g, k): [Float32Array, Float32Array, number] => [g, exact.temperatureC[k], TABLE_TOLERANCE.temperatureC]),
      ...grids.map(([name, tol]): [Float32Array, Float32Array, number] => [table[name] as Float32Array, exact[name] as Float32Array, tol]),
    ];
    let finite = 0;
    for (const [a, b, tol] of pairs) {
      const c = compare(a, b, sample);
      expect(c.missingDiffer).toBe(0);
      expect(c.worstRel).toBeLessThanOrEqual(tol);
      for (let k = 0; k < sample.length; k++) if (Number.isFinite(b[k])) finite++;
    }
    expect(finite).toBeGreaterThan(sample.length * 5); // most products are defined in most cells
    let statusDiffer = 0;
    sample.forEach((i, k) => (statusDiffer += table.status[i] === exact.status[k] ? 0 : 1));
    expect(statusDiffer).toBe(0);
    // The sample reaches the melt onset, the no-data cells and both zones.
    expect(exact.meltOnsetKm!.some((v) => Number.isFinite(v))).toBe(true);
    expect(sample.some((i) => Number.isNaN(q.values[i]))).toBe(true);
    expect(sample.some((i) => zones[i] === 1)).toBe(true);
  });

  it('gives byte-identical grids however the rows are cut', () => {
    const plan = planThermalGrids({ ...base, tableNodes: 1024 });
    const tiled = allocateThermalGridBuffers(base);
    for (let r = 0; r < H; r += 37) computeThermalGridRows(plan, r, Math.min(H, r + 37), tiled);
    for (let k = 0; k < 2; k++) expect(Buffer.from(tiled.isothermDepthKm[k].buffer).equals(Buffer.from(table.isothermDepthKm[k].buffer))).toBe(true);
    expect(Buffer.from(tiled.meltOnsetKm!.buffer).equals(Buffer.from(table.meltOnsetKm!.buffer))).toBe(true);
  });

  it('refuses a table of fewer than four nodes or an empty range', () => {
    const query = { isothermsC: [300], depthsKm: [], maxDepthKm: 60 };
    const p = { basal: false, meltOnset: false, wetSolidus: false };
    expect(() => buildGeothermTable(models[0], query, p, 40, 90, 3)).toThrow(/nodes ≥ 4/);
    expect(() => buildGeothermTable(models[0], query, p, 90, 90, 16)).toThrow(/qLo < qHi/);
  });
});
