import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import type { Grid } from '../../shared/grid/grid.ts';
import { erfc } from '../../shared/heatflow/erfc.ts';
import { paleoclimateCorrection, paleoDisturbanceC, SECONDS_PER_YEAR, type ClimateStep } from '../../shared/heatflow/paleoclimate.ts';
import { rectangleSolidAngle, topographicFactor, topographicallyCorrectedGradient } from '../../shared/heatflow/topography.ts';
import { harrisonCorrectionC, waplesTemperatureC } from '../../shared/heatflow/bht-empirical.ts';
import { correctSites } from '../../shared/heatflow/sites.ts';
import { correctBht } from '../../shared/wells/correction.ts';
import { analyzeWell } from '../../shared/wells/analyze.ts';
import { readWells } from '../../shared/wells/checks.ts';

const root = new URL('../../', import.meta.url).pathname;
const tmp = join(root, '.tmp');
mkdirSync(tmp, { recursive: true });
const dir = mkdtempSync(join(tmp, 'hfc-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('erfc', () => {
  it('matches tabulated values', () => {
    // Abramowitz & Stegun (1964) Table 7.1 (erf to 10 places; from memory) and CPython 3.11 math.erfc
    // (a general-purpose reference library) to 1e-12 relative.
    const ref: [number, number][] = [
      [0.1, 0.8875370839817152],
      [0.5, 0.4795001221869535],
      [1, 0.1572992070502851],
      [1.5, 0.03389485352468927],
      [2, 0.004677734981047265],
      [2.5, 0.0004069520174449589],
      [3, 2.209049699858544e-5],
      [4, 1.541725790028002e-8],
      [-1, 1.842700792949715],
    ];
    for (const [x, v] of ref) expect(Math.abs(erfc(x) - v) / v).toBeLessThan(1e-12);
    expect(1 - erfc(0.5)).toBeCloseTo(0.5204998778, 10); // A&S Table 7.1: erf(0.5)
    expect(1 - erfc(1)).toBeCloseTo(0.8427007929, 10); // A&S Table 7.1: erf(1)
  });
});

/**
 * An independent solution of the same problem: the 1-D heat equation ∂T/∂t = κ∂²T/∂z² on 0–8 km by explicit
 * finite differences (FTCS, stable for κΔt/Δz² ≤ 1/2), surface held at the step history, zero disturbance at
 * the bottom, started from no disturbance before the oldest step. Returns today's disturbance at every node.
 */
function finiteDifferenceDisturbance(steps: ClimateStep[], kappa: number, dzM: number, depthM: number): Float64Array {
  const n = Math.round(depthM / dzM) + 1;
  let t = new Float64Array(n),
    next = new Float64Array(n);
  const oldest = Math.max(...steps.map((s) => s.yearsAgo)) * SECONDS_PER_YEAR;
  const dt = (0.25 * dzM * dzM) / kappa;
  const nSteps = Math.ceil(oldest / dt);
  const h = oldest / nSteps;
  const r = (kappa * h) / (dzM * dzM);
  for (let k = 1; k <= nSteps; k++) {
    const tAgo = oldest - k * h; // time before present at the end of this step
    let surface = 0;
    for (const s of steps) if (s.yearsAgo * SECONDS_PER_YEAR > tAgo + 1e-6) surface += s.deltaC;
    next[0] = surface;
    for (let i = 1; i < n - 1; i++) next[i] = t[i] + r * (t[i + 1] - 2 * t[i] + t[i - 1]);
    next[n - 1] = 0;
    [t, next] = [next, t];
  }
  return t;
}

describe('paleoclimatic correction', () => {
  const kappa = 1e-6;
  const steps: ClimateStep[] = [
    { yearsAgo: 12000, deltaC: 8 },
    { yearsAgo: 3000, deltaC: -1.5 },
  ];
  it('matches a finite-difference solution of the half-space with a stepped surface temperature', () => {
    const dz = 10;
    const fd = finiteDifferenceDisturbance(steps, kappa, dz, 8000);
    for (const z of [0, 100, 500, 1000, 2000]) expect(paleoDisturbanceC(z, steps, kappa)).toBeCloseTo(fd[z / dz], 1);
    for (const [top, bottom] of [
      [100, 1000],
      [200, 2000],
      [0, 3000],
    ]) {
      const fdMeanGradient = ((fd[bottom / dz] - fd[top / dz]) / (bottom - top)) * 1000;
      const c = paleoclimateCorrection(top, bottom, steps, kappa);
      // FTCS with Δz = 10 m: the start-up of the step at the surface is smeared over a few Δt; 0.02 °C/km is
      // under 0.5 % of the disturbances here (−4 to −7 °C/km).
      expect(Math.abs(c.gradientDisturbanceCPerKm - fdMeanGradient)).toBeLessThan(0.02);
    }
  });
  it('has the size and sign the half-space step response gives at z = 2√(κt)', () => {
    // ΔT·erfc(1) at z = 2√(κt) (Carslaw & Jaeger 1959 §2.4; erfc(1) = 0.157299 A&S Table 7.1).
    const t = 10000;
    const z = 2 * Math.sqrt(kappa * t * SECONDS_PER_YEAR);
    expect(paleoDisturbanceC(z, [{ yearsAgo: t, deltaC: 5 }], kappa)).toBeCloseTo(5 * 0.1572992, 5);
    // Post-glacial warming lowers the shallow gradient: a positive correction.
    const c = paleoclimateCorrection(100, 1000, [{ yearsAgo: t, deltaC: 8 }], kappa);
    expect(c.gradientDisturbanceCPerKm).toBeLessThan(-3);
  });
  it('refuses a step with a non-positive age', () => {
    expect(() => paleoclimateCorrection(0, 1000, [{ yearsAgo: 0, deltaC: 1 }], kappa)).toThrow(/yearsAgo/);
  });
});

/** A lon/lat DEM around (0°, 0°) with elevation h(xM) along the local east axis (metres), constant north–south. */
function demOf(hOfX: (xM: number) => number, halfWidthDeg: number, cellDeg: number): Grid<Float64Array> {
  const width = Math.round((2 * halfWidthDeg) / cellDeg),
    height = width;
  const values = new Float64Array(width * height);
  const mPerDegX = (6378137 * Math.PI) / 180; // prime-vertical radius at the equator = a (WGS84)
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = hOfX((-halfWidthDeg + (c + 0.5) * cellDeg) * mPerDegX);
  return { width, height, values, west: -halfWidthDeg, north: halfWidthDeg, dx: cellDeg, dy: cellDeg, crs: 'EPSG:4326', units: 'm' };
}

describe('topographic correction', () => {
  it('solid angle of a rectangle: a whole quadrant seen from above it is π/2 sr, and a small square ≈ A·z/r³', () => {
    // Geometry: a quarter of the plane subtends a quarter of the hemisphere's 2π sr.
    expect(rectangleSolidAngle(0, 1e9, 0, 1e9, 10)).toBeCloseTo(Math.PI / 2, 6);
    // Far square of side 1 at horizontal distance 100, height 10: ≈ A·z/r³ (the Poisson kernel).
    expect(rectangleSolidAngle(99.5, 100.5, -0.5, 0.5, 10) / (10 / Math.hypot(100, 10) ** 3)).toBeCloseTo(1, 3);
  });

  it('a long straight step: recovers the gradient of the half-plane solution', () => {
    // Plane boundary value θ0 = (G − β)·H on the upper side (x < 0), 0 on the lower. Reference 1, infinite step:
    // the half-plane's harmonic response is u = θ0·φ/π, φ = atan2(z, x) (Poisson integral for the half-plane;
    // Carslaw & Jaeger 1959, from memory), so F = H·[atan2(z2, x) − atan2(z1, x)]/(π·(z2 − z1)).
    // Reference 2, the same step cut to the disc of radius R the method sums: the 3-D Poisson integral
    // (1/2π)∫∫ θ·z/(ρ² + z²)^{3/2} ρ dρ dα, integrated over ρ in closed form (ρ0 = x/(−cos α) to R) and over α by
    // Simpson's rule here, independently of the method's Cartesian cells and solid angles.
    const H = 800,
      xSite = 2000,
      G = 30,
      beta = 6.5,
      R = 130_000;
    const mPerDegX = (6378137 * Math.PI) / 180;
    const phiDisc = (z: number) => {
      if (z === 0) return 0;
      const n = 20000,
        a0 = Math.PI / 2,
        a1 = (3 * Math.PI) / 2,
        h = (a1 - a0) / n;
      let s = 0;
      for (let i = 0; i <= n; i++) {
        const a = a0 + i * h,
          c = Math.cos(a);
        const rho0 = c < 0 ? xSite / -c : Infinity;
        const v = rho0 < R ? z * (1 / Math.hypot(rho0, z) - 1 / Math.hypot(R, z)) : 0;
        s += (i === 0 || i === n ? 1 : i % 2 === 1 ? 4 : 2) * v;
      }
      return (H * ((s * h) / 3)) / (2 * Math.PI);
    };
    const dem = demOf((x) => (x < 0 ? H : 0), 1.2, 0.004);
    for (const [z1, z2] of [
      [0, 1000],
      [200, 2000],
    ]) {
      const fInfinite = (H * (Math.atan2(z2, xSite) - Math.atan2(z1, xSite))) / (Math.PI * (z2 - z1));
      const fDisc = (phiDisc(z2) - phiDisc(z1)) / (z2 - z1);
      const f = topographicFactor(dem, xSite / mPerDegX, 0, z1, z2, R / 1000);
      expect(Math.abs(f.factor - fDisc) / fDisc).toBeLessThan(0.002);
      // Cutting the step at R removes about H/(2R) from F (the far half-plane at θ0): 3 % here, and the report says
      // how much of the kernel lies beyond R.
      expect(Math.abs(fInfinite - fDisc - H / (2 * R)) / fInfinite).toBeLessThan(0.005);
      const measured = G + (G - beta) * fDisc; // what a well beside the step reads, with the terrain used
      expect(topographicallyCorrectedGradient(measured, f.factor, beta)).toBeCloseTo(G, 1);
      // and against the infinite step, within the truncation of the terrain to R
      expect(Math.abs(topographicallyCorrectedGradient(G + (G - beta) * fInfinite, f.factor, beta) - G)).toBeLessThan(0.1);
    }
  });

  it('sinusoidal ridges: the disturbance decays as e^(−2πz/λ)', () => {
    // Boundary value (G − β)·H·cos(kx) relative to the crest; the harmonic solution is cos(kx)·e^(−kz)
    // (separation of variables for Laplace's equation; Carslaw & Jaeger 1959, from memory), so at a crest
    // F = H·(e^(−kz2) − e^(−kz1))/(z2 − z1) (negative: crests read low gradients). Relative to the crest the
    // boundary value also holds the constant −H, whose response over a disc of radius R is
    // −H·(1 − z/√(R² + z²)) (Poisson integral of a constant over a disc), which adds its own term to F.
    const H = 300,
      lambda = 10000,
      k = (2 * Math.PI) / lambda,
      R = 130_000;
    const dem = demOf((x) => H * Math.cos(k * x), 1.2, 0.004);
    const [z1, z2] = [100, 1500];
    const disc = (z: number) => -H * (1 - z / Math.hypot(R, z));
    const fExact = (H * (Math.exp(-k * z2) - Math.exp(-k * z1))) / (z2 - z1) + (disc(z2) - disc(z1)) / (z2 - z1);
    const f = topographicFactor(dem, 0, 0, z1, z2, R / 1000);
    // Cells are 445 m (λ/22): their means differ from the cosine by about (k·Δx)²/24 = 0.5 %.
    expect(fExact).toBeLessThan(0);
    expect(Math.abs(f.factor - fExact) / Math.abs(fExact)).toBeLessThan(0.01);
  });

  it('a level plain needs no correction', () => {
    const dem = demOf(() => 120, 0.5, 0.01);
    const f = topographicFactor(dem, 0.01, 0.02, 0, 2000, 30);
    expect(Math.abs(f.factor)).toBeLessThan(1e-12);
    expect(f.siteElevationM).toBeCloseTo(120, 9);
  });
});

describe('empirical BHT corrections', () => {
  it('Harrison et al. (1983): ΔT = −16.51213476 + 0.01826842109·z − 2.344936959e-6·z² (from memory)', () => {
    // At 2000 m, derived from the published polynomial: −16.51213476 + 36.53684218 − 9.379747836 = 10.644959584 °C.
    expect(harrisonCorrectionC(2000)).toBeCloseTo(10.644959584, 8);
    const c = correctBht(2000, 80, { method: 'harrison1983' });
    expect(c.temperatureC).toBeCloseTo(90.644959584, 8);
    expect(c.flags).toEqual([]);
    expect(correctBht(5000, 150, { method: 'harrison1983' }).flags).toContain('empirical-extrapolated');
  });
  it('Waples, Pacheco & Vera (2004): T = Ts + f(BHT − Ts) − 0.001391(z − 4498), f = 1.32866 − 0.005289·TSC', () => {
    // What this checks: the code evaluates the equation of the paper's abstract (docs/sources.md#bht-empirical: the
    // coefficients match the abstract; the full text and any worked example in it could not be reached). BHT 150 °C at
    // 5000 m, 10 h after circulation, Ts 20 °C, by hand: f = 1.27577; T = 20 + 1.27577·130 − 0.001391·502 = 185.151818 °C.
    expect(waplesTemperatureC(150, 20, 10, 5000)).toBeCloseTo(185.151818, 6);
    expect(correctBht(5000, 150, { method: 'waples2004' }, { hoursSinceCirculation: 10, surfaceTemperatureC: 20 }).temperatureC).toBeCloseTo(185.151818, 6);
    const noTime = correctBht(5000, 150, { method: 'waples2004' }, { surfaceTemperatureC: 20 });
    expect(noTime.method).toBe('none');
    expect(noTime.flags).toContain('empirical-needs-time');
  });
  it('a well of Harrison-biased BHTs recovers its true gradient', () => {
    // Formation 10 + 0.03·z (30 °C/km); each BHT reads low by exactly the Harrison ΔT at its depth.
    const depths = [1200, 1800, 2400, 3000, 3600];
    const [well] = readWells([
      {
        geometry: { type: 'Point', coordinates: [-128, -38] },
        properties: { id: 'H', measurements: depths.map((z) => ({ depthM: z, temperatureC: 10 + 0.03 * z - harrisonCorrectionC(z), kind: 'bht' })) },
      },
    ]);
    const r = analyzeWell(well, { bht: { method: 'harrison1983' }, surfaceTemperatureC: 10, conductivityWmK: 2.5 });
    expect(r.gradient!.gradientCPerKm).toBeCloseTo(30, 6);
  });
});

describe('site corrections and report', () => {
  const site = (props: Record<string, unknown>) => ({
    type: 'Feature' as const,
    geometry: { type: 'Point' as const, coordinates: [0, 0] },
    properties: { id: 'S1', heatFlowMWm2: 60, ...props } as Record<string, unknown>,
  });
  const paleo = { steps: [{ yearsAgo: 12000, deltaC: 8 }], diffusivityM2s: 1e-6 };
  it('adds k × the mean paleoclimatic gradient disturbance and keeps the raw value', () => {
    const { features, reports } = correctSites([site({ intervalTopM: 100, intervalBottomM: 800, conductivityWmK: 2.5 })], { paleoclimate: paleo });
    // Independent evaluation of the published formula: mean of −ΔT·exp(−z²/4κt)/√(πκt) over 100–800 m by Simpson's rule.
    const kt = 1e-6 * 12000 * SECONDS_PER_YEAR;
    const g = (z: number) => (-8 * Math.exp((-z * z) / (4 * kt))) / Math.sqrt(Math.PI * kt);
    let s = 0;
    const n = 1000,
      h = 700 / n;
    for (let i = 0; i <= n; i++) s += (i === 0 || i === n ? 1 : i % 2 === 1 ? 4 : 2) * g(100 + i * h);
    const meanGradientCPerKm = ((s * h) / 3 / 700) * 1000;
    const expected = 60 - 2.5 * meanGradientCPerKm;
    expect(reports[0].status).toBe('corrected');
    expect(reports[0].correctedHeatFlowMWm2).toBeCloseTo(expected, 6);
    expect(features[0].properties.heatFlowMWm2).toBeCloseTo(expected, 2);
    expect(features[0].properties.uncorrectedHeatFlowMWm2).toBe(60);
    expect(reports[0].units.heatFlow).toBe('mW/m²');
  });
  it('says why a site without an interval is not corrected', () => {
    const { features, reports } = correctSites([site({ conductivityWmK: 2.5 })], { paleoclimate: paleo });
    expect(reports[0].status).toBe('not-applicable');
    expect(reports[0].reason).toMatch(/intervalTopM/);
    expect(features[0].properties.heatFlowMWm2).toBe(60);
  });
});

describe('correct-sites and wells on the command line', () => {
  const run = (args: string[]) => spawnSync(process.execPath, [join(root, 'bin/subtherm.mjs'), ...args], { cwd: root, encoding: 'utf8' });
  it('corrects sites with the demo terrain and a climate history, and reports each correction', () => {
    const sites = join(dir, 'sites.geojson');
    writeFileSync(
      sites,
      JSON.stringify({
        type: 'FeatureCollection',
        features: [
          {
            type: 'Feature',
            geometry: { type: 'Point', coordinates: [-128.3, -38.4] },
            properties: { id: 'A', heatFlowMWm2: 70, gradientCPerKm: 28, intervalTopM: 50, intervalBottomM: 900 },
          },
          { type: 'Feature', geometry: { type: 'Point', coordinates: [-128.1, -38.2] }, properties: { id: 'B', heatFlowMWm2: 65 } },
        ],
      }),
    );
    const out = join(dir, 'corrected.geojson');
    const r = run(['correct-sites', '--sites', sites, '--terrain', 'fixtures/demo/terrain.tif', '--paleoclimate', '12000:8,3000:-1', '--out', out, '--json']);
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const j = JSON.parse(r.stdout);
    const a = j.reports.find((x: { id: string }) => x.id === 'A');
    expect(a.interval.corrections.map((c: { kind: string }) => c.kind)).toEqual(['paleoclimate', 'topographic']);
    expect(a.correctedHeatFlowMWm2).toBeCloseTo(
      a.rawHeatFlowMWm2 + a.interval.corrections[0].heatFlowChangeMWm2 + a.interval.corrections[1].heatFlowChangeMWm2,
      9,
    );
    expect(j.reports.find((x: { id: string }) => x.id === 'B').status).toBe('not-applicable');
    const written = JSON.parse(readFileSync(out, 'utf8'));
    expect(written.caution).toMatch(/Screening/);
    expect(written.features[0].properties.paleoclimateCorrectionMWm2).toBeGreaterThan(0);
  });
  it('exits 2 naming the option on a bad history', () => {
    const r = run(['correct-sites', '--sites', 'fixtures/demo/sites.geojson', '--paleoclimate', '0:5']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/paleoclimate.*yearsAgo/);
  });
  it('wells records the corrections in each derived site', () => {
    const out = join(dir, 'well-sites.geojson');
    const r = run([
      'wells',
      '--wells',
      'fixtures/demo/wells.geojson',
      '--model',
      'fixtures/demo/model.json',
      '--paleoclimate',
      '12000:8',
      '--out',
      out,
      '--json',
    ]);
    expect(r.status).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.corrections.length).toBeGreaterThan(0);
    const f = JSON.parse(readFileSync(out, 'utf8')).features[0].properties;
    expect(f.heatFlowMWm2).toBeCloseTo(f.uncorrectedHeatFlowMWm2 + f.paleoclimateCorrectionMWm2, 1);
    expect(f.topographicCorrectionMWm2).toBeNull();
  });
});
