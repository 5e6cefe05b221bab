import { describe, expect, it } from 'vitest';
import {
  FACIES_FIELDS,
  INDEX_MINERAL_ZONES,
  classifyFacies,
  compareZones,
  depthFromPressureKbar,
  dryPeridotiteSolidusC,
  isWetGraniteSolidusApproximate,
  peakConditions,
  stableAluminosilicate,
  suggestZoneName,
  wetGraniteSolidusC,
  zoneRank,
} from '../../shared/petrology/index.ts';
import { columnLimits, compileModel, limitedTemperature, solveModelColumn, temperatureAtDepth, lithostaticPressureMPa } from '../../shared/thermal/index.ts';

describe('index-mineral zones (Barrovian order, docs/sources.md#barrovian-zones [checked order])', () => {
  it('orders chlorite < biotite < garnet < staurolite < kyanite < sillimanite', () => {
    expect(INDEX_MINERAL_ZONES.map((z) => z.name)).toEqual(['chlorite', 'biotite', 'garnet', 'staurolite', 'kyanite', 'sillimanite']);
    expect(zoneRank('Garnet zone')).toBe(2);
    expect(zoneRank('andalusite')).toBe(-1);
    expect(compareZones('biotite', 'kyanite')).toBeLessThan(0);
  });
  it('isograd temperatures rise with grade (approximate, from memory)', () => {
    const t = INDEX_MINERAL_ZONES.slice(1).map((z) => z.isogradTemperatureC!.min);
    for (let i = 1; i < t.length; i++) expect(t[i]).toBeGreaterThan(t[i - 1]);
  });
  it('suggests the nearest valid name', () => {
    expect(suggestZoneName('staurolit')).toBe('staurolite');
    expect(suggestZoneName('Silimanite zone')).toBe('sillimanite');
    expect(suggestZoneName('basalt')).toBeNull();
  });
});

describe('facies (project drawing; test points well inside fields, docs/sources.md#metamorphic-facies: boundaries ±50 °C, ±1–2 kbar)', () => {
  // Points deep inside each field on textbook diagrams (common practice: e.g. Spear 1993, Yardley 1989).
  const inside: [number, number, string][] = [
    [100, 1, 'zeolite'],
    [250, 3, 'prehnite-pumpellyite'],
    [400, 4, 'greenschist'],
    [600, 6, 'amphibolite'],
    [850, 8, 'granulite'],
    [250, 12, 'blueschist'],
    [700, 18, 'eclogite'],
    [600, 0.8, 'hornfels'],
  ];
  for (const [t, p, name] of inside) {
    it(`${t} °C, ${p} kbar → ${name}`, () => {
      const r = classifyFacies(t, p);
      expect(r.facies).toBe(name);
    });
  }
  it('marks points near a boundary as approximate', () => {
    const r = classifyFacies(505, 6);
    expect(r.approximate).toBe(true);
    expect(['greenschist', 'amphibolite']).toContain(r.facies);
    expect(classifyFacies(600, 6).approximate).toBe(false);
  });
  it('polygons tile the diagram: every grid point belongs to exactly one field', () => {
    const inPoly = (poly: [number, number][], t: number, p: number) => {
      let c = false;
      for (let i = 0, j = poly.length - 1; i < poly.length; j = i++) {
        const [ti, pi] = poly[i],
          [tj, pj] = poly[j];
        if (pi > p !== pj > p && t < ((tj - ti) * (p - pi)) / (pj - pi) + ti) c = !c;
      }
      return c;
    };
    for (let t = 3.7; t < 1100; t += 21.3)
      for (let p = 0.13; p < 25; p += 0.71) {
        expect(FACIES_FIELDS.filter((f) => inPoly(f.polygon, t, p)).length).toBe(1);
      }
  });
  it('is null outside the diagram', () => {
    expect(classifyFacies(1300, 5).facies).toBeNull();
  });
});

describe('aluminosilicates (Holdaway 1971 triple point 501 °C, 3.76 kbar [checked]; Pattison 1992 ~550 °C, 4.5 kbar, from memory)', () => {
  it('points well inside each field', () => {
    expect(stableAluminosilicate(400, 1).polymorph).toBe('andalusite');
    expect(stableAluminosilicate(500, 8).polymorph).toBe('kyanite');
    expect(stableAluminosilicate(750, 5).polymorph).toBe('sillimanite');
    expect(stableAluminosilicate(650, 1).polymorph).toBe('andalusite');
  });
  it('the calibrations differ near the triple point (520 °C, 4 kbar)', () => {
    expect(stableAluminosilicate(520, 4, 'holdaway1971').polymorph).toBe('sillimanite');
    expect(stableAluminosilicate(520, 4, 'pattison1992').polymorph).toBe('andalusite');
    expect(stableAluminosilicate(520, 4, 'holdaway1971').nearBoundary).toBe(true);
  });
});

describe('solidus curves', () => {
  it('dry peridotite, Hirschmann (2000): 0, 1, 3 GPa → 1120.66, 1248.46, 1473.42 °C (docs/sources.md#solidus-peridotite-dry [derived])', () => {
    const f = (p: number) => -5.104 * p * p + 132.899 * p + 1120.661;
    for (const [p, t] of [
      [0, 1120.66],
      [1, 1248.46],
      [3, 1473.42],
    ]) {
      expect(dryPeridotiteSolidusC(p)).toBeCloseTo(f(p), 10);
      expect(dryPeridotiteSolidusC(p)).toBeCloseTo(t, 2);
    }
  });
  it('water-saturated granite passes through Huang & Wyllie (1973) 680 °C at 2 kbar, 620 °C at 10 kbar [checked]', () => {
    expect(wetGraniteSolidusC(2)).toBeCloseTo(680, 9);
    expect(wetGraniteSolidusC(10)).toBeCloseTo(620, 9);
    for (let p = 2; p < 10; p += 0.5) {
      expect(wetGraniteSolidusC(p + 0.5)).toBeLessThan(wetGraniteSolidusC(p)); // monotone between the checked points
      expect(wetGraniteSolidusC(p)).toBeLessThanOrEqual(680);
      expect(wetGraniteSolidusC(p)).toBeGreaterThanOrEqual(620);
    }
    expect(isWetGraniteSolidusApproximate(1)).toBe(true);
    expect(isWetGraniteSolidusApproximate(5)).toBe(false);
  });
  it('finds where a geotherm crosses the solidus of the rock it is in (wet granite in felsic crust, dry peridotite in mantle)', () => {
    const layer = { bottomKm: 80, conductivityWmK: 2.5, heatProductionUWm3: 0.3, densityKgM3: 2900 };
    const felsic = compileModel({ surfaceTemperatureC: 10, surfaceHeatFlowMWm2: 90, layers: [layer] });
    const st = solveModelColumn(felsic);
    const lim = columnLimits(felsic, st, 80, 0.1);
    const zw = lim.wetSolidusKm;
    expect(Math.abs(temperatureAtDepth(felsic, zw) - wetGraniteSolidusC(lithostaticPressureMPa(felsic, zw) / 100))).toBeLessThan(1e-3);
    expect(temperatureAtDepth(felsic, zw - 0.05)).toBeLessThan(wetGraniteSolidusC(lithostaticPressureMPa(felsic, zw - 0.05) / 100));
    expect(zw).toBeLessThan(lim.meltOnsetKm);
    const mantle = compileModel({ surfaceTemperatureC: 10, surfaceHeatFlowMWm2: 90, layers: [{ ...layer, rock: 'mantle' }] });
    const sm = solveModelColumn(mantle);
    const lm = columnLimits(mantle, sm, 80, 0.1);
    const zd = lm.meltOnsetKm;
    expect(zd).toBeGreaterThan(0);
    expect(Math.abs(limitedTemperature(mantle, sm, lm, zd) - dryPeridotiteSolidusC(lithostaticPressureMPa(mantle, zd) / 1000))).toBeLessThan(1e-3);
    expect(limitedTemperature(mantle, sm, lm, zd - 0.05)).toBeLessThan(dryPeridotiteSolidusC(lithostaticPressureMPa(mantle, zd - 0.05) / 1000));
  });
});

describe('peak P–T to depth', () => {
  it('z = P/(ρg): 2.649 kbar at 2700 kg/m³ is 10 km (docs/sources.md#pressure-lithostatic lithostatic check, inverted)', () => {
    expect(depthFromPressureKbar(2.6487, 2700, 9.81)).toBeCloseTo(10, 3);
  });
  it('apparent gradient (T − T0)/z: 25 °C/km with T0 = 15 °C puts 300 °C at 11.4 km (common practice)', () => {
    const p = (11.4 * 2700 * 9.81) / 1e5; // kbar at 11.4 km
    const r = peakConditions(300, p, { surfaceTemperatureC: 15, densityKgM3: 2700 });
    expect(r.depthKm).toBeCloseTo(11.4, 9);
    expect(r.apparentGradientCPerKm).toBeCloseTo(25, 1);
    expect(peakConditions(650, 7).facies.facies).toBe('amphibolite');
  });
});
