import { describe, expect, it } from 'vitest';
import {
  COLUMN_FLOW_EXHAUSTED,
  ColumnState,
  basalHeatFlow,
  columnProfile,
  compileModel,
  geothermGrid,
  heatFlowAtDepth,
  heatProductionFromRadioelements,
  isothermDepth,
  reducedHeatFlow,
  solveColumn,
  temperatureAtDepth,
  type ThermalModel,
} from '../../shared/thermal/index.ts';

const one = (layer: Partial<ThermalModel['layers'][0]>, q0 = 60, t0 = 10): ThermalModel => ({
  surfaceTemperatureC: t0,
  surfaceHeatFlowMWm2: q0,
  layers: [{ bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: 2700, ...layer }],
});

/** Bisection on a published closed form T(z), to 1e-9 km. */
function rootOf(f: (z: number) => number, target: number, lo = 0, hi = 100): number {
  for (let i = 0; i < 200 && hi - lo > 1e-10; i++) {
    const m = 0.5 * (lo + hi);
    if (f(m) < target) lo = m;
    else hi = m;
  }
  return 0.5 * (lo + hi);
}

describe('exponential heat production (Turcotte & Schubert 2002, §4-8)', () => {
  // T(z) = T0 + qm·z/k + (A0·hr²/k)(1 − e^(−z/hr)), qm = q0 − A0·hr (Turcotte & Schubert 2002, §4-8).
  const T0 = 10,
    q0 = 60,
    A0 = 2.5,
    hr = 10,
    k = 2.5,
    qm = q0 - A0 * hr;
  const published = (z: number) => T0 + (qm * z) / k + ((A0 * hr * hr) / k) * (1 - Math.exp(-z / hr));
  const cm = compileModel(one({ conductivityWmK: k, heatProductionUWm3: A0, heatProductionDecayKm: hr, heatProducingUpperCrust: true }, q0, T0));

  it('matches the closed form and the docs/sources.md#geotherm-exponential check values', () => {
    // Check values [derived] in docs/sources.md#geotherm-exponential from the formula above: 119.347, 213.212, 376.466, 596.980 °C.
    const check: [number, number][] = [
      [5, 119.347],
      [10, 213.212],
      [20, 376.466],
      [35, 596.98],
    ];
    for (const [z, t] of check) {
      expect(temperatureAtDepth(cm, z)).toBeCloseTo(published(z), 9);
      expect(temperatureAtDepth(cm, z)).toBeCloseTo(t, 3);
    }
  });

  it('finds isotherm depths to better than 1 m', () => {
    // Depth to 150 / 300 / 500 °C = 6.5627 / 15.1426 / 28.2795 km (docs/sources.md#geotherm-exponential [derived], same formula).
    const check: [number, number][] = [
      [150, 6.5627],
      [300, 15.1426],
      [500, 28.2795],
    ];
    for (const [t, z] of check) {
      const d = isothermDepth(cm, t)!;
      expect(Math.abs(d - rootOf(published, t))).toBeLessThan(1e-6);
      expect(d).toBeCloseTo(z, 4);
    }
  });

  it('reports qm as the reduced heat flow (q0 = qr + D·A0, Birch/Lachenbruch)', () => {
    expect(reducedHeatFlow(cm, q0)).toBeCloseTo(35, 12);
  });

  it('defines the reduced heat flow on the marked layer only, below any sediment above it', () => {
    // q0 = qr + D·A0 holds for the heat-producing layer; sediment above it (2 km of 1.5 µW/m³ = 3 mW/m²) adds its
    // own production: qr = 60 − 3 − 2.5·10 = 32 mW/m² (Turcotte & Schubert 2002, §4-8, applied below the sediment).
    const sedModel: ThermalModel = {
      surfaceTemperatureC: T0,
      surfaceHeatFlowMWm2: q0,
      layers: [
        { name: 'sediment', rock: 'sediment', bottomKm: 2, conductivityWmK: 2, heatProductionUWm3: 1.5, densityKgM3: 2400 },
        {
          name: 'upper crust',
          bottomKm: 40,
          conductivityWmK: k,
          heatProductionUWm3: A0,
          heatProductionDecayKm: hr,
          heatProducingUpperCrust: true,
          densityKgM3: 2700,
        },
      ],
    };
    expect(reducedHeatFlow(compileModel(sedModel), q0)).toBeCloseTo(32, 12);
    // No marked layer: not applicable (NaN), never the top layer by default.
    const unmarked = { ...sedModel, layers: sedModel.layers.map((l) => ({ ...l, heatProducingUpperCrust: undefined })) };
    expect(Number.isNaN(reducedHeatFlow(compileModel(unmarked), q0))).toBe(true);
    expect(compileModel(unmarked).reducedHeatFlowMethod).toBe('not-applicable');
  });

  it('reads conductivityReferenceTempC as k(T_ref) = k0/(1 + b·T_ref)', () => {
    // Chapman (1986) form k(T) = k0/(1 + bT): a value of 2.5 W/m/K measured at 25 °C with b = 1.5e-3 is k0 = 2.59375.
    const ref = compileModel(one({ conductivityWmK: 2.5, conductivityTempCoeffPerK: 1.5e-3, conductivityReferenceTempC: 25 }));
    expect(ref.k0[0]).toBeCloseTo(2.5 * (1 + 1.5e-3 * 25), 12);
    const at0 = compileModel(one({ conductivityWmK: 2.5, conductivityTempCoeffPerK: 1.5e-3 }));
    expect(at0.k0[0]).toBe(2.5);
  });
});

describe('constant heat production (Turcotte & Schubert 2002, §4-6)', () => {
  // T = T0 + q0·z/k − A·z²/(2k); z_iso = [q0 − √(q0² − 2Ak(T − T0))]/A.
  const T0 = 10,
    q0 = 60,
    A = 1,
    k = 2.5;
  const cm = compileModel(one({ heatProductionUWm3: A, conductivityWmK: k }, q0, T0));
  it('matches T(10, 20, 35) = 230, 410, 605 °C (docs/sources.md#geotherm-constant [derived])', () => {
    const check: [number, number][] = [
      [10, 230],
      [20, 410],
      [35, 605],
    ];
    for (const [z, t] of check) expect(temperatureAtDepth(cm, z)).toBeCloseTo(t, 9);
  });
  it('matches the published isotherm-depth formula', () => {
    for (const t of [100, 300, 550]) {
      const z = (q0 - Math.sqrt(q0 * q0 - 2 * A * k * (t - T0))) / A;
      expect(isothermDepth(cm, t)).toBeCloseTo(z, 9);
    }
  });
  it('gives q(z) = q0 − A·z', () => {
    expect(heatFlowAtDepth(cm, 25)).toBeCloseTo(35, 12);
  });
});

describe('temperature-dependent conductivity, Kirchhoff transform (Chapman 1986 form)', () => {
  // θ = T0 + q0·z/k0 − A·z²/(2k0) − T0 (the constant-k solution); T = [(1 + bT0)·e^(bθ) − 1]/b.
  const T0 = 10,
    q0 = 60,
    A = 1,
    k0 = 3,
    b = 1.5e-3;
  const published = (z: number) => {
    const theta = (q0 * z) / k0 - (A * z * z) / (2 * k0);
    return ((1 + b * T0) * Math.exp(b * theta) - 1) / b;
  };
  const cm = compileModel(one({ heatProductionUWm3: A, conductivityWmK: k0, conductivityTempCoeffPerK: b }, q0, T0));
  it('matches T(10, 20, 35) = 224.186, 448.968, 756.911 °C (docs/sources.md#conductivity-temperature [derived])', () => {
    const check: [number, number][] = [
      [10, 224.186],
      [20, 448.968],
      [35, 756.911],
    ];
    for (const [z, t] of check) {
      expect(temperatureAtDepth(cm, z)).toBeCloseTo(published(z), 9);
      expect(temperatureAtDepth(cm, z)).toBeCloseTo(t, 3);
    }
  });
  it('isotherm depth inverts the closed form to 1e-6 km', () => {
    for (const t of [200, 400, 700]) expect(Math.abs(isothermDepth(cm, t)! - rootOf(published, t))).toBeLessThan(1e-6);
  });
  it('b → 0 tends to the constant-k solution', () => {
    const k = compileModel(one({ heatProductionUWm3: A, conductivityWmK: k0 }, q0, T0));
    const tiny = compileModel(one({ heatProductionUWm3: A, conductivityWmK: k0, conductivityTempCoeffPerK: 1e-12 }, q0, T0));
    for (const z of [5, 20, 40]) expect(temperatureAtDepth(tiny, z)).toBeCloseTo(temperatureAtDepth(k, z), 6);
  });
});

describe('Rybach (1976) heat production from U, Th, K', () => {
  it('ρ = 2670, U 4 ppm, Th 15 ppm, K 3.5 % → 2.367 µW/m³ (A = 10⁻⁵ρ(9.52U + 2.56Th + 3.48K), from memory)', () => {
    expect(heatProductionFromRadioelements(2670, 4, 15, 3.5)).toBeCloseTo(1e-5 * 2670 * (9.52 * 4 + 2.56 * 15 + 3.48 * 3.5), 12);
    expect(heatProductionFromRadioelements(2670, 4, 15, 3.5)).toBeCloseTo(2.367, 3);
  });
  it('a layer given by contents behaves as one given by A', () => {
    const byA = compileModel(one({ heatProductionUWm3: heatProductionFromRadioelements(2670, 4, 15, 3.5), densityKgM3: 2670 }, 80));
    const byC = compileModel(one({ heatProductionUWm3: undefined, uraniumPpm: 4, thoriumPpm: 15, potassiumPct: 3.5, densityKgM3: 2670 }, 80));
    expect(temperatureAtDepth(byC, 12)).toBeCloseTo(temperatureAtDepth(byA, 12), 10);
  });
});

// A four-layer model with everything switched on (invented for the test).
const FOUR: ThermalModel = {
  surfaceTemperatureC: 12,
  surfaceHeatFlowMWm2: 75,
  layers: [
    { name: 'sediments', bottomKm: 3, conductivityWmK: 2.2, conductivityTempCoeffPerK: 1e-3, heatProductionUWm3: 1.2, densityKgM3: 2400 },
    {
      name: 'upper crust',
      bottomKm: 16,
      conductivityWmK: 3.1,
      conductivityTempCoeffPerK: 1.5e-3,
      heatProductionUWm3: 2.8,
      heatProductionDecayKm: 9,
      densityKgM3: 2700,
    },
    {
      name: 'lower crust',
      bottomKm: 36,
      conductivityWmK: 2.6,
      conductivityTempCoeffPerK: 1e-4,
      heatProductionUWm3: 0.5,
      heatProductionDecayKm: 20,
      densityKgM3: 2900,
    },
    { name: 'mantle', bottomKm: 60, conductivityWmK: 3.3, conductivityTempCoeffPerK: 2e-4, heatProductionUWm3: 0.02, densityKgM3: 3300 },
  ],
};

describe('layered invariants', () => {
  const cm = compileModel(FOUR);
  it('T and q are continuous across layer boundaries', () => {
    for (const zb of [3, 16, 36]) {
      const e = 1e-9;
      expect(Math.abs(temperatureAtDepth(cm, zb - e) - temperatureAtDepth(cm, zb + e))).toBeLessThan(1e-6);
      expect(Math.abs(heatFlowAtDepth(cm, zb - e) - heatFlowAtDepth(cm, zb + e))).toBeLessThan(1e-6);
    }
  });
  it('q0 − q_base = ∫A dz (numerical Simpson integral of A(z))', () => {
    const A = (z: number) => {
      const l = FOUR.layers;
      let top = 0;
      for (const L of l) {
        if (z < L.bottomKm || L === l[l.length - 1])
          return (L.heatProductionUWm3 ?? 0) * (L.heatProductionDecayKm ? Math.exp(-(z - top) / L.heatProductionDecayKm) : 1);
        top = L.bottomKm;
      }
      return 0;
    };
    let integral = 0;
    let top = 0;
    for (const L of FOUR.layers) {
      const n = 2000,
        h = (L.bottomKm - top) / n;
      let s = A(top + 1e-12) + A(L.bottomKm - 1e-12);
      for (let i = 1; i < n; i++) s += (i % 2 ? 4 : 2) * A(top + i * h);
      integral += (s * h) / 3;
      top = L.bottomKm;
    }
    expect(75 - basalHeatFlow(cm, 75)).toBeCloseTo(integral, 8);
  });
  it('A → 0 gives a linear geotherm with constant k', () => {
    const lin = compileModel(one({ heatProductionUWm3: 0, conductivityWmK: 2 }, 50, 5));
    for (const z of [1, 7, 33]) expect(temperatureAtDepth(lin, z)).toBeCloseTo(5 + (50 * z) / 2, 10);
  });
  it('agrees with an RK4 integration of dT/dz = q(z)/k(T) to 0.01 °C', () => {
    // dT/dz [K/km] = q [mW/m²]·(1 + bT)/k0 [W/m/K]; RK4 with 1 m steps, layer boundaries on step edges.
    let T = FOUR.surfaceTemperatureC,
      top = 0,
      worst = 0;
    for (let i = 0; i < FOUR.layers.length; i++) {
      const L = FOUR.layers[i];
      const b = L.conductivityTempCoeffPerK ?? 0,
        D = L.heatProductionDecayKm ?? 0,
        A0 = L.heatProductionUWm3 ?? 0;
      const qTop = heatFlowAtDepth(cm, top);
      const q = (z: number) => qTop - (D > 0 ? A0 * D * (1 - Math.exp(-(z - top) / D)) : A0 * (z - top));
      const f = (z: number, t: number) => (q(z) * (1 + b * t)) / L.conductivityWmK;
      const n = Math.round((L.bottomKm - top) / 0.001),
        h = (L.bottomKm - top) / n;
      for (let s = 0; s < n; s++) {
        const z = top + s * h;
        const k1 = f(z, T),
          k2 = f(z + h / 2, T + (h / 2) * k1),
          k3 = f(z + h / 2, T + (h / 2) * k2),
          k4 = f(z + h, T + h * k3);
        T += (h / 6) * (k1 + 2 * k2 + 2 * k3 + k4);
        if (s % 500 === 499) worst = Math.max(worst, Math.abs(T - temperatureAtDepth(cm, z + h)));
      }
      top = L.bottomKm;
    }
    expect(worst).toBeLessThan(0.01);
    expect(Math.abs(T - temperatureAtDepth(cm, 60))).toBeLessThan(0.01);
  });
  it('temperature increases with depth and isotherms invert it', () => {
    const p = columnProfile(cm, { stepKm: 0.5 });
    // Felsic crust (the default rock) melts: temperatures stop at the melt onset, increasing above it.
    for (let j = 1; j < p.temperatureC.length; j++) {
      if (p.depthKm[j] <= p.limits.validToKm) expect(p.temperatureC[j]).toBeGreaterThan(p.temperatureC[j - 1]);
      else expect(Number.isNaN(p.temperatureC[j])).toBe(true);
    }
    for (const t of [100, 300, 500, 800]) {
      const z = isothermDepth(cm, t)!;
      expect(Math.abs(temperatureAtDepth(cm, z) - t)).toBeLessThan(1e-5);
    }
    expect(isothermDepth(cm, 5000)).toBeNull();
    expect(isothermDepth(cm, 5)).toBe(0); // the surface (12 °C) is already above 5 °C
  });
});

describe('surface heat flow too low for the heat production', () => {
  // A = 1 µW/m³ over 40 km removes 40 mW/m²: q0 = 30 runs out at 30 km (q = q0 − A·z).
  const cm = compileModel(one({ heatProductionUWm3: 1 }, 30));
  it('flags the column and gives no temperature below the q = 0 depth', () => {
    const p = columnProfile(cm, { stepKm: 1 });
    expect(p.status & COLUMN_FLOW_EXHAUSTED).toBeTruthy();
    expect(p.validToKm).toBeCloseTo(30, 9);
    expect(p.warnings.some((w) => w.includes('too low'))).toBe(true);
    expect(Number.isNaN(temperatureAtDepth(cm, 35))).toBe(true);
    for (let j = 1; j < p.temperatureC.length; j++) {
      if (Number.isFinite(p.temperatureC[j])) expect(p.temperatureC[j]).toBeGreaterThanOrEqual(p.temperatureC[j - 1]);
    }
    // The maximum, T0 + q0²/(2Ak) = 10 + 900/5 = 190 °C, is never exceeded; hotter isotherms are not reached.
    expect(temperatureAtDepth(cm, 30)).toBeCloseTo(190, 9);
    expect(isothermDepth(cm, 200)).toBeNull();
    expect(isothermDepth(cm, 150)).toBeCloseTo((30 - Math.sqrt(900 - 2 * 2.5 * 140)) / 1, 9);
  });
});

describe('last layer and compile errors', () => {
  it('extends the last layer to the maximum depth with a warning', () => {
    const cm = compileModel(one({ heatProductionUWm3: 0.5 }), { maxDepthKm: 60 });
    expect(cm.warnings.some((w) => w.includes('extrapolated'))).toBe(true);
    expect(temperatureAtDepth(cm, 55)).toBeCloseTo(10 + (60 * 55) / 2.5 - (0.5 * 55 * 55) / 5, 9);
  });
  it('rejects k ≤ 0, NaN and non-increasing bottoms', () => {
    expect(() => compileModel(one({ conductivityWmK: 0 }))).toThrow(/conductivityWmK/);
    expect(() => compileModel(one({ conductivityWmK: NaN }))).toThrow(/conductivityWmK/);
    expect(() => compileModel({ ...FOUR, layers: [FOUR.layers[1], FOUR.layers[0]] })).toThrow(/bottomKm/);
  });
});

describe('grid form', () => {
  const cm = compileModel(FOUR);
  it('writes the same values as the point queries, for every cell, zones and NaN', () => {
    const n = 50;
    const q = new Float32Array(n);
    for (let i = 0; i < n; i++) q[i] = 40 + i * 1.5;
    q[7] = NaN;
    const iso = [new Float32Array(n), new Float32Array(n)];
    const tmp = [new Float64Array(n)];
    const status = new Uint8Array(n);
    const other = compileModel(one({ heatProductionUWm3: 1 }));
    const zones = new Uint16Array(n).map((_, i) => i % 2);
    geothermGrid([cm, other], q, { isothermsC: [150, 400], depthsKm: [7.5], maxDepthKm: 60 }, { isothermDepthKm: iso, temperatureC: tmp, status }, { zones });
    for (let i = 0; i < n; i++) {
      const m = i % 2 ? other : cm;
      if (i === 7) {
        expect(Number.isNaN(iso[0][i])).toBe(true);
        expect(status[i]).toBe(4);
        continue;
      }
      const d = isothermDepth(m, 400, { heatFlowMWm2: q[i], maxDepthKm: 60 });
      if (d === null) expect(Number.isNaN(iso[1][i])).toBe(true);
      else expect(iso[1][i]).toBeCloseTo(d, 4);
      const t = temperatureAtDepth(m, 7.5, { heatFlowMWm2: q[i] });
      if (Number.isNaN(t)) expect(Number.isNaN(tmp[0][i])).toBe(true);
      else expect(tmp[0][i]).toBeCloseTo(t, 10);
    }
  });
  it('processes a sub-range only', () => {
    const q = new Float64Array([60, 70, 80, 90]);
    const out = [new Float64Array(4).fill(-1)];
    geothermGrid(cm, q, { isothermsC: [300], depthsKm: [] }, { isothermDepthKm: out, temperatureC: [] }, { start: 1, end: 3 });
    expect(out[0][0]).toBe(-1);
    expect(out[0][3]).toBe(-1);
    expect(out[0][2]).toBeCloseTo(isothermDepth(cm, 300, { heatFlowMWm2: 80 })!, 9);
  });
  it('reuses one ColumnState without leaking state between columns', () => {
    const st = new ColumnState(cm.nLayers);
    solveColumn(cm, 20, 10, st); // exhausted
    solveColumn(cm, 75, 12, st);
    expect(st.status).toBe(0);
    expect(st.validToKm).toBe(cm.stackBottomKm);
  });
});
