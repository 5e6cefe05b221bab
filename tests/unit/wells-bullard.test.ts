import { describe, expect, it } from 'vitest';
import { bullardFit } from '../../shared/wells/bullard.ts';
import { columnFromLithology, columnProblems, harmonicMeanConductivity, thermalResistance } from '../../shared/wells/conductivity.ts';
import { analyzeWell } from '../../shared/wells/analyze.ts';
import type { ConductivityInterval, CorrectedPoint } from '../../shared/wells/types.ts';

// Invented layered column; steady conduction without heat sources: q constant, so T(z) = Ts + q·R(z) with
// R(z) = Σ Δz/k (Bullard 1939). In each layer dT/dz = q/k: a piecewise-linear temperature profile.
const COLUMN: ConductivityInterval[] = [
  { topM: 0, bottomM: 500, conductivityWmK: 2.0 },
  { topM: 500, bottomM: 1200, conductivityWmK: 3.0 },
  { topM: 1200, bottomM: 2000, conductivityWmK: 1.5 },
  { topM: 2000, bottomM: 3000, conductivityWmK: 2.5 },
];
const TS = 12;
const Q = 0.068; // W/m² = 68 mW/m²

/** R(z) in m²K/W, written out by hand for the column above. */
function resistance(z: number): number {
  let r = 0;
  for (const c of COLUMN) r += Math.max(0, Math.min(z, c.bottomM) - c.topM) / c.conductivityWmK;
  return r;
}

const depths = [150, 350, 600, 900, 1150, 1300, 1600, 1900, 2100, 2500, 2900];
const pts = (): CorrectedPoint[] =>
  depths.map((z) => ({
    sources: [0],
    depthM: z,
    rawTemperatureC: TS + Q * resistance(z),
    temperatureC: TS + Q * resistance(z),
    sdC: 0.5,
    kind: 'log',
    method: 'equilibrium',
    flags: [],
    used: true,
  }));

describe('thermal resistance and harmonic mean', () => {
  it('sums Δz/k in m²K/W', () => {
    const r = thermalResistance(COLUMN, 0, [0, 500, 1000, 2000, 2400]);
    // 500/2 = 250; + 500/3; 250 + 700/3 + 800/1.5; + 400/2.5.
    expect(Array.from(r)).toEqual([0, 250, 250 + 500 / 3, 250 + 700 / 3 + 800 / 1.5, 250 + 700 / 3 + 800 / 1.5 + 160].map((v) => expect.closeTo(v, 9)));
  });

  it('gives NaN below the column, above its origin and past a gap', () => {
    const gap: ConductivityInterval[] = [
      { topM: 0, bottomM: 100, conductivityWmK: 2 },
      { topM: 200, bottomM: 300, conductivityWmK: 2 },
    ];
    const r = thermalResistance(gap, 0, [50, 150, 250, 3500]);
    expect(r[0]).toBeCloseTo(25, 12);
    expect(Number.isNaN(r[1]) && Number.isNaN(r[2]) && Number.isNaN(r[3])).toBe(true);
    expect(Number.isNaN(thermalResistance(COLUMN, 100, [50])[0])).toBe(true);
  });

  it('harmonic mean = thickness / Σ Δz/k, with the covered fraction', () => {
    const h = harmonicMeanConductivity(COLUMN, 0, 2000);
    expect(h.conductivityWmK).toBeCloseTo(2000 / (250 + 700 / 3 + 800 / 1.5), 12);
    expect(h.coverage).toBe(1);
    const part = harmonicMeanConductivity(COLUMN, 2500, 3500);
    expect(part.conductivityWmK).toBeCloseTo(2.5, 12);
    expect(part.coverage).toBeCloseTo(0.5, 12);
  });

  it('evaluates k(T) = k0/(1 + bT) on a linear temperature profile exactly', () => {
    // ∫ dz/k = ∫ (1 + b·T(z))/k0 dz with T = t0 + g·z: (Δz/k0)(1 + b·(t0 + g·zmid)) — exact since it is linear.
    const col: ConductivityInterval[] = [{ topM: 0, bottomM: 4000, conductivityWmK: 3, tempCoeffPerK: 0.0015 }];
    const h = harmonicMeanConductivity(col, 1000, 3000, { t0C: 10, gradientCPerKm: 30 });
    // T(2000 m) = 70 °C → k = 3/(1 + 0.105).
    expect(h.conductivityWmK).toBeCloseTo(3 / 1.105, 12);
    // Numerical check by a fine midpoint sum.
    let r = 0;
    for (let i = 0; i < 20000; i++) {
      const z = 1000 + (i + 0.5) * 0.1;
      r += (0.1 * (1 + 0.0015 * (10 + 0.03 * z))) / 3;
    }
    expect(h.conductivityWmK).toBeCloseTo(2000 / r, 9);
  });

  it('reports overlapping or inverted intervals', () => {
    expect(columnProblems(COLUMN)).toEqual([]);
    const p = columnProblems([
      { topM: 0, bottomM: 600, conductivityWmK: 2 },
      { topM: 500, bottomM: 900, conductivityWmK: 2 },
      { topM: 950, bottomM: 940, conductivityWmK: 0 },
    ]);
    expect(p.map((x) => x.index)).toEqual([2, 2, 1]);
  });

  it('maps lithologies through the user map, case-insensitively, and lists the missing ones', () => {
    const r = columnFromLithology(
      [
        { topM: 0, bottomM: 400, lithology: 'Shale' },
        { topM: 400, bottomM: 900, lithology: 'sandstone ' },
        { topM: 900, bottomM: 1000, lithology: 'halite' },
      ],
      { shale: 1.4, Sandstone: 2.8 },
    );
    expect(r.column.map((c) => c.conductivityWmK)).toEqual([1.4, 2.8]);
    expect(r.missing).toEqual(['halite']);
  });
});

describe('Bullard method', () => {
  it('returns the heat flow as the slope of T against R for a layered column (68 mW/m²)', () => {
    const b = bullardFit(pts(), COLUMN)!;
    // Slope K/(m²K/W) = W/m², ×1000 = mW/m².
    expect(b.heatFlowMWm2).toBeCloseTo(68, 9);
    expect(b.interceptC).toBeCloseTo(TS, 9);
    expect(b.nPoints).toBe(depths.length);
    const anchored = bullardFit(pts(), COLUMN, { surfaceTemperatureC: TS })!;
    expect(anchored.anchored).toBe(true);
    expect(anchored.heatFlowMWm2).toBeCloseTo(68, 9);
  });

  it('is chosen by analyzeWell over gradient × harmonic mean, which a layered column biases', () => {
    const r = analyzeWell(
      {
        id: 'LAY-1',
        lonLat: [0, 0],
        measurements: depths.map((z) => ({ depthM: z, temperatureC: TS + Q * resistance(z), kind: 'log' as const })),
        conductivityColumn: COLUMN,
        flags: [],
      },
      { surfaceTemperatureC: TS },
    );
    expect(r.heatFlow!.method).toBe('bullard');
    expect(r.heatFlow!.heatFlowMWm2).toBeCloseTo(68, 6);
    expect(r.bullard!.resistanceM2KW[0]).toBeCloseTo(75, 9); // 150 m / 2.0 W/m/K
    // The straight-line gradient through a piecewise-linear profile times the harmonic mean is only near 68.
    expect(Math.abs(r.heatFlow!.gradientMethodMWm2 - 68)).toBeGreaterThan(0.05);
    expect(Math.abs(r.heatFlow!.gradientMethodMWm2 - 68)).toBeLessThan(68 * 0.15);
  });

  it('leaves points outside the column out of the Bullard fit', () => {
    const short = COLUMN.slice(0, 2); // to 1200 m
    const b = bullardFit(pts(), short)!;
    expect(b.nPoints).toBe(5);
    expect(Number.isNaN(b.resistanceM2KW[6])).toBe(true);
    expect(b.heatFlowMWm2).toBeCloseTo(68, 9);
  });
});
