import { describe, expect, it } from 'vitest';
import { compileModel, ColumnState, solveColumn, columnIsothermDepth } from '../../shared/thermal/index.ts';
import type { ThermalModel } from '../../shared/thermal/index.ts';

// The isotherm root against a bisection (200 halvings, to round-off) of the closed-form temperature of one layer
// with exponential heat production and k(T) = k0/(1 + bT) (Turcotte & Schubert 2002 §4-8 with the Kirchhoff
// transform, Chapman 1986): the search promises 1 mm; it delivers far better for short and long decay lengths.
describe('isotherm depth root', () => {
  for (const D of [1, 2, 10, 30, 100]) {
    it(`is within 1e-6 km of the bisected root (decay length ${D} km)`, () => {
      const A = 3,
        k0 = 2.5,
        b = 0.0015,
        T0 = 10;
      const model = {
        surfaceTemperatureC: T0,
        layers: [{ bottomKm: 40, conductivityWmK: k0, conductivityTempCoeffPerK: b, heatProductionUWm3: A, heatProductionDecayKm: D }],
      } as ThermalModel;
      const cm = compileModel(model, { maxDepthKm: 40 });
      const st = new ColumnState(1);
      const temperature = (z: number, q: number) => {
        const i2 = A * D * (z + D * Math.expm1(-z / D));
        const theta = (q * z - i2) / k0;
        return T0 + ((1 + b * T0) * Math.expm1(b * theta)) / b;
      };
      let worst = 0,
        n = 0;
      for (let q = 40; q < 140; q += 0.731) {
        solveColumn(cm, q, T0, st);
        for (const T of [100, 150, 300, 500]) {
          const z = columnIsothermDepth(cm, st, T, 40);
          if (!Number.isFinite(z)) continue;
          // Bisect over the valid part of the column only: where q reaches 0 (strong, slowly decaying heat
          // production) the temperature peaks and the closed form would fall below it.
          let lo = 0,
            hi = st.validToKm;
          for (let i = 0; i < 200; i++) {
            const m = (lo + hi) / 2;
            if (temperature(m, q) < T) lo = m;
            else hi = m;
          }
          worst = Math.max(worst, Math.abs(z - lo));
          n++;
        }
      }
      expect(n).toBeGreaterThan(100);
      expect(worst).toBeLessThan(1e-6);
    });
  }
});
