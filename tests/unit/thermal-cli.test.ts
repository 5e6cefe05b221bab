import { afterAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';

const root = new URL('../..', import.meta.url).pathname;
mkdirSync(join(root, '.tmp'), { recursive: true });
const dir = mkdtempSync(join(root, '.tmp', 'geotherm-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function run(model: unknown, args: string[]) {
  const file = join(dir, `m${Math.random().toString(36).slice(2)}.json`);
  writeFileSync(file, typeof model === 'string' ? model : JSON.stringify(model));
  const r = spawnSync(process.execPath, ['bin/subtherm.mjs', 'geotherm', '--model', file, ...args], { cwd: root, encoding: 'utf8' });
  return { code: r.status, out: r.stdout, err: r.stderr };
}

// Turcotte & Schubert (2002) §4-8 worked case of docs/sources.md#geotherm-exponential: T0 10, q0 60, A0 2.5, hr 10, k 2.5.
const GOOD = {
  surfaceTemperatureC: 10,
  surfaceHeatFlowMWm2: 60,
  layers: [
    { name: 'crust', bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 2.5, heatProductionDecayKm: 10, densityKgM3: 2700, heatProducingUpperCrust: true },
  ],
};

describe('subtherm geotherm', () => {
  it('prints the DESIGN.md §4 JSON for a good model', () => {
    const r = run(GOOD, ['--isotherms', '150,300', '--depths-km', '5,35', '--max-depth-km', '40', '--step-km', '1', '--json']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    // 6.5627 km and 119.347 / 596.980 °C: docs/sources.md#geotherm-exponential [derived] from Turcotte & Schubert (2002) §4-8.
    expect(j.isothermDepthsKm['150']).toBeCloseTo(6.5627, 4);
    expect(j.temperatureAtDepthsC['5']).toBeCloseTo(119.347, 3);
    expect(j.temperatureAtDepthsC['35']).toBeCloseTo(596.98, 3);
    expect(j.reducedHeatFlowMWm2).toBeCloseTo(35, 6);
    expect(j.basalHeatFlowMWm2).toBeCloseTo(60 - 25 * (1 - Math.exp(-4)), 5);
    expect(j.profile).toHaveLength(41);
    expect(Object.keys(j.profile[10]).sort()).toEqual([
      'depthKm',
      'effectivePressureMPa',
      'facies',
      'faciesApproximate',
      'flag',
      'heatFlowMWm2',
      'poreFluidFactor',
      'porePressureMPa',
      'pressureMPa',
      'regime',
      'temperatureC',
    ]);
    expect(j.profile[10].pressureMPa).toBeCloseTo(264.87, 6); // ρgh, 2700 · 9.81 · 10 km
    // Hydrostatic fresh water with the model's g = 9.81: 98.1 MPa at 10 km; λ = 98.1/264.87 (Hubbert & Rubey 1959).
    expect(j.profile[10].porePressureMPa).toBeCloseTo(98.1, 6);
    expect(j.profile[10].poreFluidFactor).toBeCloseTo(98.1 / 264.87, 6);
    expect(j.profile[10].effectivePressureMPa).toBeCloseTo(264.87 - 98.1, 6);
    expect(j.solidusCrossingKm).toHaveProperty('wetSolidus');
    expect(j.solidusCrossingKm).toHaveProperty('meltOnset');
    expect(Array.isArray(j.warnings)).toBe(true);
  });

  it('gives percentile objects with --realizations', () => {
    const m = { ...GOOD, surfaceHeatFlowMWm2: { dist: 'normal', mean: 60, sd: 4 } };
    const r = run(m, ['--realizations', '200', '--seed', '3', '--max-depth-km', '40', '--step-km', '2', '--json']);
    expect(r.code).toBe(0);
    const s = JSON.parse(r.out).isothermDepthsKm['300'];
    expect(Object.keys(s).sort()).toEqual(['mean', 'p10', 'p50', 'p90', 'sd', 'stderrP50']);
    expect(s.p10).toBeLessThan(s.p50);
    expect(s.p50).toBeLessThan(s.p90);
  });

  it('prints a readable table without --json', () => {
    const r = run(GOOD, ['--step-km', '10', '--max-depth-km', '40']);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/depth \(km\)\s+T \(°C\)/);
    expect(r.out).toMatch(/Screening estimates only/);
  });

  const bad: [string, unknown, string, string][] = [
    ['non-increasing bottoms', { ...GOOD, layers: [GOOD.layers[0], { ...GOOD.layers[0], name: 'lower', bottomKm: 30 }] }, 'layers[1] (lower)', 'bottomKm'],
    ['k ≤ 0', { ...GOOD, layers: [{ ...GOOD.layers[0], conductivityWmK: 0 }] }, 'layers[0] (crust)', 'conductivityWmK'],
    ['missing field', { ...GOOD, layers: [{ name: 'crust', bottomKm: 40, heatProductionUWm3: 1 }] }, 'layers[0] (crust)', 'conductivityWmK'],
    ['negative bottom', { ...GOOD, layers: [{ ...GOOD.layers[0], bottomKm: -5 }] }, 'layers[0] (crust)', 'bottomKm'],
    [
      '1 + bT ≤ 0 in the modelled range',
      {
        ...GOOD,
        layers: [
          { ...GOOD.layers[0], conductivityTempCoeffPerK: -0.01 },
          { name: 'deep', bottomKm: 60, conductivityWmK: 3, conductivityTempCoeffPerK: -0.02, heatProductionUWm3: 0 },
        ],
      },
      'layers[1] (deep)',
      'conductivityTempCoeffPerK',
    ],
  ];
  for (const [what, model, feature, field] of bad) {
    it(`exits 2 naming the layer and field: ${what}`, () => {
      const r = run(model, ['--json']);
      expect(r.code).toBe(2);
      const e = JSON.parse(r.out).error;
      expect(e.details.some((d: { feature: string; field: string }) => d.feature === feature && d.field.includes(field))).toBe(true);
      expect(r.err).not.toMatch(/at .*\.ts:\d+/); // no stack trace
    });
  }

  it('gives no temperature below the melt onset of the demo model at 110 mW/m², and says so', () => {
    const demo = readFileSync(join(root, 'fixtures/demo/model.json'), 'utf8');
    const r = run(demo, ['--heat-flow', '110', '--depths-km', '20,35,60', '--isotherms', '300,1500', '--json']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.out);
    expect(j.meltOnsetKm).toBeLessThan(20);
    expect(j.meltOnset.rock).toBe('felsic-crust');
    expect(j.inconsistent).toBe(true);
    expect(j.invalidBelow).toBe('melt-onset');
    expect(j.temperatureAtDepthsC).toEqual({ '20': null, '35': null, '60': null });
    expect(j.isothermDepthsKm['1500']).toBeNull();
    const below = j.profile.filter((p: { depthKm: number }) => p.depthKm > j.meltOnsetKm);
    expect(below.length).toBeGreaterThan(0);
    for (const p of below) {
      expect(p.temperatureC).toBeNull();
      expect(p.facies).toBeNull(); // the facies readout stops at the melt onset
      expect(p.flag).toBe('melt-onset');
    }
    expect(j.warnings.some((w: string) => w.startsWith('melt onset at'))).toBe(true);
  });

  it('gives lithostatic, pore and effective pressure (docs/sources.md#pore-fluid-factor example after Hubbert & Rubey 1959)', () => {
    // 3 km, ρ 2500, g 9.81: Plith 73.575 MPa; hydrostatic fresh water 29.43 MPa; λ 0.400; effective 44.145 MPa.
    const m = { surfaceTemperatureC: 10, surfaceHeatFlowMWm2: 60, layers: [{ bottomKm: 10, conductivityWmK: 2.5, heatProductionUWm3: 1, densityKgM3: 2500 }] };
    const j = JSON.parse(run(m, ['--step-km', '1', '--max-depth-km', '10', '--fluid-density-kg-m3', '1000', '--json']).out);
    const at3 = j.profile.find((p: { depthKm: number }) => p.depthKm === 3);
    expect(at3.pressureMPa).toBeCloseTo(73.575, 6);
    expect(at3.porePressureMPa).toBeCloseTo(29.43, 6);
    expect(at3.poreFluidFactor).toBeCloseTo(0.4, 6);
    expect(at3.effectivePressureMPa).toBeCloseTo(44.145, 6);
  });

  it('takes a fixed pore-fluid factor with --pore-pressure lambda:0.7 and refuses bad ones', () => {
    const m = { surfaceTemperatureC: 10, surfaceHeatFlowMWm2: 60, layers: [{ bottomKm: 10, conductivityWmK: 2.5, heatProductionUWm3: 1, densityKgM3: 2500 }] };
    // A fixed λ = 0.7: Pf = 0.7 × 73.575 = 51.5025 MPa, effective 22.0725 MPa, and the hazard warning (λ ≥ 0.6).
    const k = JSON.parse(run(m, ['--step-km', '1', '--max-depth-km', '10', '--pore-pressure', 'lambda:0.7', '--json']).out);
    const k3 = k.profile.find((p: { depthKm: number }) => p.depthKm === 3);
    expect(k3.porePressureMPa).toBeCloseTo(51.5025, 6);
    expect(k3.poreFluidFactor).toBeCloseTo(0.7, 9);
    expect(k3.effectivePressureMPa).toBeCloseTo(22.0725, 6);
    expect(k.warnings.some((w: string) => w.includes('hydraulic-fracturing'))).toBe(true);
    expect(run(m, ['--pore-pressure', 'lambda:x', '--json']).code).toBe(2);
  });

  it('exits 2 on NaN options and unreadable JSON', () => {
    expect(run(GOOD, ['--heat-flow', 'NaN', '--json']).code).toBe(2);
    expect(run('{ not json', ['--json']).code).toBe(2);
  });
});
