/**
 * Radiogenic heat production from radioelement contents, Rybach (1976, "Radioactive heat production in rocks and
 * its relation to other petrophysical parameters", Pure Appl. Geophys. 114):
 *   A [µW/m³] = 10⁻⁵ · ρ [kg/m³] · (9.52·c_U [ppm] + 2.56·c_Th [ppm] + 3.48·c_K [wt %]).
 * (The coefficients are the heat release per unit mass of U, Th and K, in the units that make A come out in µW/m³.)
 */
export function heatProductionFromRadioelements(densityKgM3: number, uraniumPpm: number, thoriumPpm: number, potassiumPct: number): number {
  if (!(densityKgM3 > 0)) throw new RangeError(`density must be > 0 kg/m³, got ${densityKgM3}`);
  if (!(uraniumPpm >= 0) || !(thoriumPpm >= 0) || !(potassiumPct >= 0)) {
    throw new RangeError(`radioelement contents must be ≥ 0, got U ${uraniumPpm} ppm, Th ${thoriumPpm} ppm, K ${potassiumPct} %`);
  }
  return 1e-5 * densityKgM3 * (9.52 * uraniumPpm + 2.56 * thoriumPpm + 3.48 * potassiumPct);
}
