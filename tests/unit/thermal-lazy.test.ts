import { describe, expect, it } from 'vitest';
import {
  compileModel,
  ColumnState,
  solveColumn,
  columnIsothermDepth,
  columnTemperature,
  geothermGrid,
  columnLimits,
  limitedIsothermDepth,
  limitedTemperature,
  COLUMN_FLOW_EXHAUSTED,
  COLUMN_MELT_ONSET,
} from '../../shared/thermal/index.ts';
import type { ThermalModel } from '../../shared/thermal/index.ts';

// A four-layer stack with k(T) and exponential heat production; high heat production at depth so that low surface
// heat flow exhausts the flow in the third layer (the inconsistent-column case).
const MODEL: ThermalModel = {
  surfaceTemperatureC: 10,
  layers: [
    { name: 'cover', bottomKm: 3, conductivityWmK: 2.2, conductivityTempCoeffPerK: 1e-3, heatProductionUWm3: 1.2, densityKgM3: 2400 },
    {
      name: 'upper',
      bottomKm: 16,
      conductivityWmK: 3.1,
      conductivityTempCoeffPerK: 1.5e-3,
      heatProductionUWm3: 2.5,
      heatProductionDecayKm: 10,
      densityKgM3: 2700,
    },
    { name: 'lower', bottomKm: 36, conductivityWmK: 2.6, conductivityTempCoeffPerK: 1e-4, heatProductionUWm3: 1.5, densityKgM3: 2900 },
    { name: 'mantle', bottomKm: 60, conductivityWmK: 3.3, conductivityTempCoeffPerK: 2e-4, heatProductionUWm3: 0.02, densityKgM3: 3300 },
  ],
};

describe('lazy column solve (temperatures only as deep as the query needs)', () => {
  it('gives the same isotherm depths, temperatures and status as the full solve', () => {
    const cm = compileModel(MODEL, { maxDepthKm: 60 });
    const full = new ColumnState(cm.nLayers),
      lazy = new ColumnState(cm.nLayers);
    let exhausted = 0;
    for (let q0 = 30; q0 <= 140; q0 += 0.37) {
      solveColumn(cm, q0, 10, full);
      solveColumn(cm, q0, 10, lazy, 300, 10);
      expect(lazy.status).toBe(full.status);
      expect(lazy.validToKm).toBeCloseTo(full.validToKm, 12);
      if (full.status & COLUMN_FLOW_EXHAUSTED) exhausted++;
      for (const t of [150, 300]) {
        const a = columnIsothermDepth(cm, full, t, 60),
          b = columnIsothermDepth(cm, lazy, t, 60);
        if (Number.isNaN(a)) expect(b).toBeNaN();
        else expect(b).toBe(a);
      }
      for (const z of [2, 5, 10]) {
        const a = columnTemperature(cm, full, z),
          b = columnTemperature(cm, lazy, z);
        if (Number.isNaN(a)) expect(b).toBeNaN();
        else expect(b).toBe(a);
      }
    }
    expect(exhausted).toBeGreaterThan(0); // the sweep covers columns that are inconsistent deep in the stack
  });

  it('the grid form equals cell-by-cell full solves under the melt and mantle limits', () => {
    const cm = compileModel(MODEL, { maxDepthKm: 60 });
    const n = 400;
    const q = Float32Array.from({ length: n }, (_, i) => 35 + (i * 100) / n);
    const out = {
      isothermDepthKm: [new Float64Array(n), new Float64Array(n)],
      temperatureC: [new Float64Array(n)],
      status: new Uint8Array(n),
      meltOnsetKm: new Float64Array(n),
    };
    geothermGrid(cm, q, { isothermsC: [150, 300], depthsKm: [5, 25] }, { ...out, temperatureC: [out.temperatureC[0], new Float64Array(n)] });
    const st = new ColumnState(cm.nLayers);
    let melting = 0;
    for (let c = 0; c < n; c++) {
      solveColumn(cm, q[c], 10, st);
      const lim = columnLimits(cm, st, 60);
      if (lim.endReason === 'melt-onset') melting++;
      expect(out.status[c]).toBe(st.status | (lim.endReason === 'melt-onset' ? COLUMN_MELT_ONSET : 0));
      if (Number.isNaN(lim.meltOnsetKm)) expect(out.meltOnsetKm[c]).toBeNaN();
      else expect(out.meltOnsetKm[c]).toBe(lim.meltOnsetKm);
      const z = limitedIsothermDepth(cm, st, lim, 300, 60);
      if (Number.isNaN(z)) expect(out.isothermDepthKm[1][c]).toBeNaN();
      else expect(out.isothermDepthKm[1][c]).toBe(z);
      const t = limitedTemperature(cm, st, lim, 5);
      if (Number.isNaN(t)) expect(out.temperatureC[0][c]).toBeNaN();
      else expect(out.temperatureC[0][c]).toBe(t);
      // Below the limits nothing changes: the plain conductive answer.
      if (lim.endReason === null && Number.isNaN(lim.lithosphereBaseKm)) expect(out.temperatureC[0][c]).toBe(columnTemperature(cm, st, 5));
      if (lim.endReason === null && Number.isNaN(lim.lithosphereBaseKm) && Number.isFinite(z)) expect(z).toBe(columnIsothermDepth(cm, st, 300, 60));
    }
    expect(melting).toBeGreaterThan(0); // the sweep reaches columns that melt
  });
});
