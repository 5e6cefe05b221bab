import { readFileSync, existsSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';
import { compileModel, nominalModel } from '../../shared/thermal/index.ts';
import { analyzeWells } from '../../shared/wells/analyze-all.ts';
import { analyzeWell } from '../../shared/wells/analyze.ts';
import { readWells, type WellInput } from '../../shared/wells/checks.ts';
import { wellModelFromCompiled } from '../../shared/wells/model-adapter.ts';
import { modelResiduals } from '../../shared/wells/model-check.ts';

const root = new URL('../../', import.meta.url).pathname;

describe('model against wells', () => {
  it('evaluates the model geotherm at well depths in metres (Turcotte & Schubert 2002 §4-8 example)', () => {
    // docs/sources.md#geotherm-exponential [derived]: T0 = 10, q0 = 60, A0 = 2.5, hr = 10 km, k = 2.5 → T(5 km) = 119.347 °C, T(10 km) = 213.212 °C.
    const cm = compileModel({
      surfaceTemperatureC: 10,
      surfaceHeatFlowMWm2: 60,
      layers: [{ bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 2.5, heatProductionDecayKm: 10, densityKgM3: 2700 }],
    });
    const m = wellModelFromCompiled(cm);
    const r = modelResiduals(
      [
        { depthM: 5000, temperatureC: 120, used: true },
        { depthM: 10000, temperatureC: 213.212, used: true },
      ],
      m.temperature,
      60,
    );
    expect(r.modelC[0]).toBeCloseTo(119.347, 3);
    expect(r.modelC[1]).toBeCloseTo(213.212, 3);
    expect(r.residualC[0]).toBeCloseTo(120 - 119.347, 3);
    expect(r.meanC).toBeCloseTo((0.653 + 0) / 2, 3);
    expect(r.rmsC).toBeCloseTo(Math.sqrt((0.653 ** 2 + 0) / 2), 3);
    expect(m.column[0]).toMatchObject({ topM: 0, bottomM: 40000, conductivityWmK: 2.5, tempCoeffPerK: 0 });
  });

  it("residuals vanish at the well's own heat flow and equal Δq·z/k at the regional one (constant k, no heat production)", () => {
    // T = T0 + q·z/k (Fourier's law; mW/m² × km / (W/m/K) = K). Invented well on q = 80 mW/m², k = 2.5; model at 60.
    const cm = compileModel({
      surfaceTemperatureC: 10,
      surfaceHeatFlowMWm2: 60,
      layers: [{ bottomKm: 30, conductivityWmK: 2.5, heatProductionUWm3: 0, densityKgM3: 2700 }],
    });
    const model = wellModelFromCompiled(cm);
    const depths = [300, 700, 1100, 1500, 1900, 2300];
    const well: WellInput = {
      id: 'MC-1',
      lonLat: [0, 0],
      measurements: depths.map((z) => ({ depthM: z, temperatureC: 10 + (80 * z) / 1000 / 2.5, kind: 'log' as const })),
      flags: [],
    };
    const r = analyzeWell(well, { model, surfaceTemperatureC: 10 });
    expect(r.conductivity!.source).toBe('model');
    expect(r.heatFlow!.heatFlowMWm2).toBeCloseTo(80, 6);
    expect(r.modelCheck!.own!.rmsC).toBeLessThan(1e-6);
    const reg = r.modelCheck!.regional!;
    expect(reg.heatFlowMWm2).toBe(60);
    reg.residualC.forEach((res, i) => expect(res).toBeCloseTo(((80 - 60) * depths[i]) / 1000 / 2.5, 6));
    // A heat flow passed in replaces the model's own for the check.
    const given = analyzeWell(well, { model, surfaceTemperatureC: 10, checkHeatFlowMWm2: 70 });
    expect(given.modelCheck!.regional!.heatFlowMWm2).toBe(70);
    expect(given.modelCheck!.regional!.meanC).toBeCloseTo((10 * (depths.reduce((s, z) => s + z, 0) / depths.length)) / 1000 / 2.5, 6);
    // Plot data: two geotherms sampled from the surface below the deepest point.
    expect(r.plot.modelRegional!.samples[0]).toEqual({ depthM: 0, temperatureC: 10 });
    expect(r.plot.modelOwn!.samples.at(-1)!.depthM).toBeGreaterThan(2300);
  });

  it('uses k(T) = k0/(1 + bT) of the model layer on the fitted line', () => {
    const cm = compileModel({
      surfaceTemperatureC: 10,
      surfaceHeatFlowMWm2: 60,
      layers: [{ bottomKm: 30, conductivityWmK: 3, conductivityTempCoeffPerK: 0.0015, heatProductionUWm3: 0, densityKgM3: 2700 }],
    });
    const model = wellModelFromCompiled(cm);
    // Temperatures from the model itself at 60 mW/m² (exact Kirchhoff solution): the derived heat flow must come back.
    const depths = [500, 1000, 1500, 2000, 2500, 3000];
    const t = model.temperature(new Float64Array(depths.map((z) => z / 1000)), 60, new Float64Array(depths.length));
    const well: WellInput = {
      id: 'KT-1',
      lonLat: [0, 0],
      measurements: depths.map((z, i) => ({ depthM: z, temperatureC: t[i], kind: 'log' as const })),
      flags: [],
    };
    const r = analyzeWell(well, { model, surfaceTemperatureC: 10 });
    expect(r.conductivity!.temperatureDependent).toBe(true);
    expect(r.conductivity!.harmonicMeanWmK).toBeLessThan(3);
    // The straight line through a slightly convex profile: within 1 % of 60 mW/m².
    expect(Math.abs(r.heatFlow!.heatFlowMWm2 - 60)).toBeLessThan(0.6);
  });
});

const demoWells = `${root}fixtures/demo/wells.geojson`;
const truthFile = `${root}fixtures/truth.json`;
const demoModel = `${root}fixtures/demo/model.json`;

describe.runIf(existsSync(demoWells) && existsSync(truthFile) && existsSync(demoModel))('demo wells against the demo truth', () => {
  it("recovers each well's surface heat flow", () => {
    const truth = JSON.parse(readFileSync(truthFile, 'utf8')) as {
      wells: { id: string; surfaceHeatFlowMWm2: number; equilibriumTemperatureC: Record<string, number>; conductivitySource: string }[];
    };
    const rawModel = JSON.parse(readFileSync(demoModel, 'utf8')) as Record<string, unknown>;
    delete rawModel.name; // a label the model schema does not take
    const m = nominalModel(parseThermalModel(rawModel));
    const cm = compileModel(m);
    const wells = readWells(parseFeatureCollection('wells', JSON.parse(readFileSync(demoWells, 'utf8'))).collection.features);
    const a = analyzeWells(wells, { model: wellModelFromCompiled(cm), surfaceTemperatureC: cm.surfaceTemperatureC });
    expect(parseFeatureCollection('sites', a.sites).collection.features).toHaveLength(truth.wells.length);
    for (const t of truth.wells) {
      const r = a.reports.find((x) => x.id === t.id)!;
      expect(r.status, t.id).toBe('ok');
      expect(r.conductivity!.source, t.id).toBe(t.conductivitySource === 'well column' ? 'column' : 'model');
      // The site's value is the surface heat flow q0 = q(z) + ∫₀^z A dz (or the direct model fit), compared with the
      // demo's surface heat flow itself (no mid-interval stand-in).
      const qTrue = t.surfaceHeatFlowMWm2;
      const q = r.heatFlow!.heatFlowMWm2;
      // Every well: within its stated one-sigma uncertainty.
      expect(Math.abs(q - qTrue), t.id).toBeLessThan(r.heatFlow!.uncertaintyMWm2);
      const uncorrectedOnly = r.points.filter((p) => p.used).every((p) => p.method === 'none');
      if (uncorrectedOnly) {
        // Uncorrected BHTs read low, so the heat flow is low: the reason they are graded low.
        expect(q, t.id).toBeLessThan(qTrue);
        expect(r.heatFlow!.quality).toBe('low');
      } else {
        // Horner-corrected and equilibrium wells: within 2 % of the truth.
        expect(Math.abs(q - qTrue) / qTrue, t.id).toBeLessThan(0.02);
      }
      // Horner T∞ against the true formation temperature at that depth (the demo adds 0.3 °C reading noise).
      for (const h of r.horner.filter((x) => x.accepted)) {
        const key = Object.keys(t.equilibriumTemperatureC).find((k) => Math.abs(Number(k) - h.depthM) < 1)!;
        expect(Math.abs(h.temperatureC - t.equilibriumTemperatureC[key]), `${t.id} at ${key} m`).toBeLessThan(1.5);
      }
    }
  });
});
