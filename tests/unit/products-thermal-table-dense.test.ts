// The heat-flow table read at 100,000 seeded random heat flows over its whole range: every read is within
// TABLE_TOLERANCE of the exact value, not only at the three points per interval the build samples.
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { compileModel, geothermGrid, nominalModel, type CompiledModel, type GeothermGridOutput } from '../../shared/thermal/index.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import {
  buildGeothermTable,
  geothermGridByTable,
  productBuffers,
  tableCoverage,
  TABLE_TOLERANCE,
  type TableProducts,
} from '../../shared/products/thermal-table.ts';
import { TABLE_NODES } from '../../shared/products/thermal-grids.ts';
import { prng } from '../helpers/prng.ts';

const N = 100_000;

function output(nIso: number, nDep: number, p: TableProducts, n: number): GeothermGridOutput {
  const f = () => new Float64Array(n);
  return {
    isothermDepthKm: Array.from({ length: nIso }, f),
    temperatureC: Array.from({ length: nDep }, f),
    status: new Uint8Array(n),
    ...(p.basal ? { basalHeatFlowMWm2: f() } : {}),
    ...(p.meltOnset ? { meltOnsetKm: f() } : {}),
    ...(p.wetSolidus ? { wetSolidusKm: f() } : {}),
  };
}

/** N seeded heat flows, uniform over [lo, hi] mW/m², with both ends included. */
function randomHeatFlows(seed: number, lo: number, hi: number): Float64Array {
  const rnd = prng(seed);
  const q = Float64Array.from({ length: N }, () => lo + (hi - lo) * rnd());
  q[0] = lo;
  q[1] = hi;
  return q;
}

/** The table of one model over [lo, hi] read at q, in Float64 (no Float32 rounding in the comparison). */
function tableRead(
  cm: CompiledModel,
  query: { isothermsC: number[]; depthsKm: number[]; maxDepthKm: number },
  p: TableProducts,
  q: Float64Array,
  lo: number,
  hi: number,
) {
  const table = buildGeothermTable(cm, query, p, lo, hi, TABLE_NODES);
  const out = output(query.isothermsC.length, query.depthsKm.length, p, q.length);
  geothermGridByTable([cm], [table], q, query, out, undefined, 0, q.length);
  return { table, out };
}

describe('heat-flow table: 100,000 random heat flows, every read within tolerance', () => {
  it('on the demo model (layer boundaries, lithosphere base, melt onset and exhausted columns inside the range) against the per-cell solve', () => {
    // A consistency check of the table against the engine's own column solve, which thermal-geotherm.test.ts and
    // products-thermal.test.ts check against the published solutions (docs/sources.md#geotherm-exponential).
    const demo = parseModelText(readFileSync(new URL('../../fixtures/demo/model.json', import.meta.url), 'utf8'), 'model.json').model;
    const cm = compileModel(nominalModel(demo), { maxDepthKm: 60 });
    const query = { isothermsC: [300, 500], depthsKm: [5, 10, 12], maxDepthKm: 60 };
    const p = { basal: true, meltOnset: true, wetSolidus: true };
    const [lo, hi] = [20, 130];
    const q = randomHeatFlows(3, lo, hi);
    const { table, out } = tableRead(cm, query, p, q, lo, hi);
    const exact = output(2, 3, p, N);
    geothermGrid(cm, q, query, exact);
    const tol = [
      TABLE_TOLERANCE.depthKm,
      TABLE_TOLERANCE.depthKm,
      ...query.depthsKm.map(() => TABLE_TOLERANCE.temperatureC),
      TABLE_TOLERANCE.heatFlowMWm2,
      TABLE_TOLERANCE.depthKm,
      TABLE_TOLERANCE.depthKm,
    ];
    const got = productBuffers(out),
      want = productBuffers(exact);
    let worstShare = 0,
      missingDiffer = 0,
      statusDiffer = 0,
      finite = 0;
    for (let k = 0; k < got.length; k++)
      for (let i = 0; i < N; i++) {
        const a = got[k][i],
          b = want[k][i];
        if (Number.isNaN(a) !== Number.isNaN(b)) missingDiffer++;
        else if (!Number.isNaN(b)) {
          finite++;
          worstShare = Math.max(worstShare, Math.abs(a - b) / tol[k]);
        }
      }
    for (let i = 0; i < N; i++) if (out.status![i] !== exact.status![i]) statusDiffer++;
    process.stdout.write(
      `demo model: worst read ${worstShare.toFixed(3)} of the tolerance; table covers ${(tableCoverage(table) * 100).toFixed(3)} % of ${lo}–${hi} mW/m²\n`,
    );
    expect(missingDiffer).toBe(0);
    expect(statusDiffer).toBe(0);
    expect(worstShare).toBeLessThanOrEqual(1);
    expect(finite).toBeGreaterThan(N * 5); // most products are defined at most heat flows
    // The range holds every status the table must keep apart: consistent, exhausted (1) and melt onset (8).
    const seen = new Set(exact.status);
    for (const s of [0, 1, 8]) expect(seen.has(s)).toBe(true);
    expect(tableCoverage(table)).toBeGreaterThan(0.99);
  }, 300_000);

  it('on a steep column (exponential heat production, k(T) = k0/(1 + bT)) against the closed form', () => {
    // One layer: A(z) = A0·e^(−z/hr) (Turcotte & Schubert 2002 §4-8, docs/sources.md#geotherm-exponential) and
    // k(T) = k0/(1 + bT) through the Kirchhoff transform (Chapman 1986, docs/sources.md#conductivity-temperature):
    // U(z) = [(q0 − A0·hr)·z + A0·hr²·(1 − e^(−z/hr))]/k0 and T = [(1 + bT0)·e^(bU) − 1]/b.
    // T0 = 10 °C, k0 = 2.2 W/m/K, b = 1.5e-3 /K, A0 = 3.5 µW/m³, hr = 8 km: up to about 950 °C at 10 km.
    const [T0, k0, b, A0, hr] = [10, 2.2, 1.5e-3, 3.5, 8];
    const cm = compileModel(
      {
        surfaceTemperatureC: T0,
        layers: [{ bottomKm: 40, conductivityWmK: k0, conductivityTempCoeffPerK: b, heatProductionUWm3: A0, heatProductionDecayKm: hr, densityKgM3: 2700 }],
      },
      { maxDepthKm: 40 },
    );
    const T = (q0: number, z: number) => ((1 + b * T0) * Math.exp((b * ((q0 - A0 * hr) * z + A0 * hr * hr * (1 - Math.exp(-z / hr)))) / k0) - 1) / b;
    const query = { isothermsC: [300, 500, 700], depthsKm: [2, 5, 10], maxDepthKm: 40 };
    const p = { basal: true, meltOnset: false, wetSolidus: false };
    const [lo, hi] = [40, 140];
    const q = randomHeatFlows(4, lo, hi);
    const { table, out } = tableRead(cm, query, p, q, lo, hi);
    // Which values exist (an isotherm above 40 km and above the melt onset, a depth above the melt onset) is the
    // engine's rule (shared/thermal/limits.ts): the table must keep it cell for cell; the values are the closed form's.
    const exact = output(3, 3, p, N);
    geothermGrid(cm, q, query, exact);
    let worstShare = 0,
      missingDiffer = 0,
      statusDiffer = 0,
      compared = 0;
    const got = productBuffers(out),
      has = productBuffers(exact);
    for (let i = 0; i < N; i++) {
      const q0 = q[i];
      if (out.status![i] !== exact.status![i]) statusDiffer++;
      for (let k = 0; k < got.length; k++) if (Number.isNaN(got[k][i]) !== Number.isNaN(has[k][i])) missingDiffer++;
      // T increases with depth here (the heat flow stays positive: q0 > A0·hr), so each isotherm has one root.
      for (let k = 0; k < 3; k++) {
        const t = query.isothermsC[k];
        if (Number.isNaN(out.isothermDepthKm[k][i])) continue;
        let zlo = 0,
          zhi = 40;
        for (let it = 0; it < 200 && zhi - zlo > 1e-12; it++) {
          const m = 0.5 * (zlo + zhi);
          if (T(q0, m) < t) zlo = m;
          else zhi = m;
        }
        worstShare = Math.max(worstShare, Math.abs(out.isothermDepthKm[k][i] - 0.5 * (zlo + zhi)) / TABLE_TOLERANCE.depthKm);
        compared++;
      }
      for (let k = 0; k < 3; k++) {
        if (Number.isNaN(out.temperatureC[k][i])) continue;
        worstShare = Math.max(worstShare, Math.abs(out.temperatureC[k][i] - T(q0, query.depthsKm[k])) / TABLE_TOLERANCE.temperatureC);
        compared++;
      }
      const basal = q0 - A0 * hr * (1 - Math.exp(-40 / hr));
      worstShare = Math.max(worstShare, Math.abs(out.basalHeatFlowMWm2![i] - basal) / TABLE_TOLERANCE.heatFlowMWm2);
    }
    process.stdout.write(
      `steep column: worst read ${worstShare.toFixed(3)} of the tolerance; table covers ${(tableCoverage(table) * 100).toFixed(3)} % of ${lo}–${hi} mW/m²\n`,
    );
    expect(missingDiffer).toBe(0);
    expect(statusDiffer).toBe(0);
    expect(compared).toBeGreaterThan(N * 4); // most isotherms and temperatures exist over the range
    // The closed form and the engine's own root search differ by far less than the tolerance (1e-9 km, 1e-9 °C).
    expect(worstShare).toBeLessThanOrEqual(1);
    expect(tableCoverage(table)).toBeGreaterThan(0.99);
  }, 300_000);
});
