import { describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection, parsePointCsv } from '../../shared/schema/features.ts';
import { analyzeWells } from '../../shared/wells/analyze-all.ts';
import { analyzeWell } from '../../shared/wells/analyze.ts';
import { readWells, type WellInput } from '../../shared/wells/checks.ts';
import { attachIntervals, parseIntervalsCsv } from '../../shared/wells/intervals-csv.ts';

// Invented wells for the checks below.
type M = {
  depthM?: number;
  depthFt?: number;
  temperatureC?: number;
  temperatureF?: number;
  kind: string;
  hoursSinceCirculation?: number;
  circulationHours?: number;
};
const feature = (id: string, measurements: M[], extra: Record<string, unknown> = {}) => ({
  type: 'Feature',
  geometry: { type: 'Point', coordinates: [-128.1, -38.2] },
  properties: { id, measurements, ...extra },
});
const fc = (...features: unknown[]) => ({ type: 'FeatureCollection', features });
const logs = (pairs: [number, number][]): M[] => pairs.map(([depthM, temperatureC]) => ({ depthM, temperatureC, kind: 'log' }));
const wellsOf = (json: unknown): WellInput[] => readWells(parseFeatureCollection('wells', json).collection.features);

function inputError(fn: () => unknown): InputError {
  try {
    fn();
  } catch (e) {
    if (e instanceof InputError) return e;
    throw e;
  }
  throw new Error('expected an InputError');
}

describe('bad and odd well data', () => {
  it('rejects a negative depth, naming the well and the field', () => {
    const e = inputError(() =>
      wellsOf(
        fc(
          feature(
            'W-NEG',
            logs([
              [-20, 14],
              [500, 25],
            ]),
          ),
        ),
      ),
    );
    expect(e.details[0].feature).toBe('0 (W-NEG)');
    expect(e.details[0].field).toBe('properties.measurements.0.depthM');
  });

  it('rejects an implausible temperature with a hint (°F given as °C?)', () => {
    const e = inputError(() =>
      wellsOf(
        fc(
          feature(
            'W-HOT',
            logs([
              [500, 25],
              [1000, 2100],
            ]),
          ),
        ),
      ),
    );
    expect(e.details[0]).toMatchObject({ feature: '0 (W-HOT)', field: 'measurements[1].temperatureC' });
    expect(e.details[0].problem).toContain('°F');
  });

  it('rejects overlapping conductivity intervals', () => {
    const e = inputError(() =>
      wellsOf(
        fc(
          feature(
            'W-OV',
            logs([
              [500, 25],
              [1000, 40],
            ]),
            {
              conductivityColumn: [
                { topM: 0, bottomM: 700, conductivityWmK: 2 },
                { topM: 600, bottomM: 1200, conductivityWmK: 3 },
              ],
            },
          ),
        ),
      ),
    );
    expect(e.details[0]).toMatchObject({ feature: '0 (W-OV)', field: 'conductivityColumn[1]' });
  });

  it('converts feet and °F (1 ft = 0.3048 m; °C = (°F − 32)·5/9)', () => {
    const [w] = wellsOf(
      fc(
        feature('W-FT', [
          { depthFt: 5000, temperatureF: 176, kind: 'log' },
          { depthFt: 1000, temperatureF: 86, kind: 'log' },
        ]),
      ),
    );
    expect(w.measurements[0].depthM).toBeCloseTo(1524, 9);
    expect(w.measurements[0].temperatureC).toBeCloseTo(80, 9);
  });

  it('gives no heat flow from one measurement without a surface anchor, and says why', () => {
    const [w] = wellsOf(fc(feature('W-ONE', logs([[1500, 60]]))));
    const r = analyzeWell(w, { conductivityWmK: 2.5 });
    expect(r.status).toBe('no-heat-flow');
    expect(r.heatFlow).toBeUndefined();
    expect(r.reason).toContain('one depth');
    expect(r.flags.map((f) => f.code)).toContain('no-gradient');
  });

  it('flags a one-measurement well with an anchor and grades it low', () => {
    const [w] = wellsOf(fc(feature('W-ONE', logs([[1500, 57]]))));
    const r = analyzeWell(w, { conductivityWmK: 2.5, surfaceTemperatureC: 12 });
    expect(r.status).toBe('ok');
    expect(r.gradient!.gradientCPerKm).toBeCloseTo(30, 9);
    expect(r.flags.map((f) => f.code)).toContain('single-measurement');
    expect(r.heatFlow!.quality).toBe('low');
  });

  it('flags temperatures below the surface temperature and refuses a heat flow from a negative gradient', () => {
    const [w] = wellsOf(
      fc(
        feature(
          'W-COLD',
          logs([
            [300, 11],
            [800, 10.5],
            [1200, 9.8],
          ]),
        ),
      ),
    );
    const r = analyzeWell(w, { conductivityWmK: 2.5, surfaceTemperatureC: 12 });
    expect(r.flags.map((f) => f.code)).toEqual(expect.arrayContaining(['below-surface-temperature', 'non-positive-gradient']));
    expect(r.points.every((p) => p.flags.includes('below-surface-temperature'))).toBe(true);
    expect(r.status).toBe('no-heat-flow');
    expect(r.heatFlow).toBeUndefined();
  });

  it('reports missing Horner times and grades the uncorrected BHTs low', () => {
    const [w] = wellsOf(
      fc(
        feature('W-BHT', [
          { depthM: 2000, temperatureC: 70, kind: 'bht', hoursSinceCirculation: 6, circulationHours: 4 },
          { depthM: 2000, temperatureC: 72, kind: 'bht', hoursSinceCirculation: 10 },
          { depthM: 2010, temperatureC: 73, kind: 'bht' },
          { depthM: 1000, temperatureC: 40, kind: 'bht' },
        ]),
      ),
    );
    expect(w.flags.map((f) => f.code)).toContain('bht-time-incomplete');
    const r = analyzeWell(w, { conductivityWmK: 2.5, surfaceTemperatureC: 12 });
    expect(r.flags.map((f) => f.code)).toContain('horner-times-missing');
    expect(r.horner).toHaveLength(0);
    expect(r.heatFlow!.quality).toBe('low');
    expect(r.heatFlow!.qualityReasons).toContain('uncorrected BHTs in the fit');
  });

  it('collapses exact duplicate rows and keeps distinct readings at one depth, both flagged', () => {
    const [w] = wellsOf(
      fc(
        feature(
          'W-DUP',
          logs([
            [500, 27],
            [500, 27],
            [500, 27.3],
            [1000, 42],
            [1500, 57],
          ]),
        ),
      ),
    );
    const r = analyzeWell(w, { conductivityWmK: 2.5, surfaceTemperatureC: 12 });
    expect(r.flags.map((f) => f.code)).toEqual(expect.arrayContaining(['duplicate-row', 'duplicate-depth']));
    expect(r.gradient!.nPoints).toBe(4);
    expect(r.points).toHaveLength(5);
  });

  it('says so when a well has a gradient but no conductivity, and makes no site', () => {
    const a = analyzeWells(
      wellsOf(
        fc(
          feature(
            'W-NOK',
            logs([
              [500, 27],
              [1000, 42],
              [1500, 57],
            ]),
          ),
        ),
      ),
      { surfaceTemperatureC: 12 },
    );
    expect(a.reports[0].status).toBe('gradient-only');
    expect(a.reports[0].gradient!.gradientCPerKm).toBeCloseTo(30, 6);
    expect(a.sites.features).toHaveLength(0);
    expect(a.warnings.join('\n')).toContain('well W-NOK: no heat flow: no conductivity');
  });
});

describe('derived sites and CSV input', () => {
  const csv = [
    'id,longitude,latitude,depthM,temperatureC,kind,hoursSinceCirculation,circulationHours,elevationM',
    'CS-1,-128.2,-38.1,2400,80.51,bht,6,4,120',
    'CS-1,-128.2,-38.1,2400,82.79,bht,10,4,',
    'CS-1,-128.2,-38.1,2400,84.26,bht,16,4,',
    'CS-1,-128.2,-38.1,900,37.5,log,,,',
    'CS-2,-127.9,-38.3,400,22,log,,,',
    'CS-2,-127.9,-38.3,800,32,log,,,',
    'CS-2,-127.9,-38.3,1200,42,log,,,',
    'CS-2,-127.9,-38.3,1600,52,log,,,',
  ].join('\n');

  it('groups CSV rows by well id, Horner-corrects, and produces sites that validate as sites', () => {
    const parsed = parsePointCsv('wells', csv);
    const wells = readWells(parsed.collection.features);
    expect(wells.map((w) => w.measurements.length)).toEqual([4, 4]);
    const intervals = parseIntervalsCsv(
      ['id,topM,bottomM,conductivityWmK,lithology', 'CS-2,0,1000,2.0,', 'CS-2,1000,1800,,granite', 'CS-1,0,3000,,granite'].join('\n'),
    );
    const e = inputError(() => attachIntervals(structuredClone(wells), parseIntervalsCsv('id,topM,bottomM,conductivityWmK\nCS-9,0,100,2')));
    expect(e.details[0]).toMatchObject({ feature: 'CS-9', field: 'id' });
    attachIntervals(wells, intervals);
    const a = analyzeWells(wells, { surfaceTemperatureC: 12, lithologyConductivity: { Granite: 3.0 } });
    const [r1, r2] = a.reports;
    // CS-1: the three BHTs are the Horner worked example (docs/sources.md#horner-bht, T∞ = 105.00 °C) each 17.83 °C cooler, so
    // the intercept moves by the same constant: T∞ = 87.17 °C.
    expect(r1.horner[0].temperatureC).toBeCloseTo(105.0 - 17.83, 2);
    expect(r1.conductivity!.source).toBe('lithology');
    // CS-2: conductivity column (2.0) over 0–1000 m only, the granite row is a lithology interval → column wins.
    expect(r2.conductivity!.source).toBe('column');
    expect(r2.flags.map((f) => f.code)).toContain('conductivity-partial');
    expect(a.sites.features.length).toBe(2);
    const sites = parseFeatureCollection('sites', a.sites);
    expect(sites.collection.features.map((f) => f.properties.id)).toEqual(['CS-1', 'CS-2']);
    for (const f of sites.collection.features) {
      const p = f.properties;
      expect(p.sourceWellId).toBe(p.id);
      expect(p.heatFlowMWm2 as number).toBeGreaterThan(0);
      expect(['high', 'medium', 'low']).toContain(p.quality);
      expect(typeof p.gradientCPerKm).toBe('number');
      expect(typeof p.conductivityWmK).toBe('number');
    }
    expect(sites.collection.features[0].properties.elevationM).toBe(120);
  });
});

describe('conductivity sources and quality grades', () => {
  const ms = logs([
    [300, 19],
    [600, 28],
    [900, 37],
    [1200, 46],
    [1500, 55],
  ]); // 30 °C/km from 10 °C
  it('flags lithologies missing from the map and a lithology column without a map', () => {
    const lith = {
      lithologyColumn: [
        { topM: 0, bottomM: 800, lithology: 'marl' },
        { topM: 800, bottomM: 1600, lithology: 'dolomite' },
      ],
    };
    const [w] = wellsOf(fc(feature('W-LITH', ms, lith)));
    const noMap = analyzeWell(w, { surfaceTemperatureC: 10 });
    expect(noMap.status).toBe('gradient-only');
    expect(noMap.flags.map((f) => f.code)).toEqual(expect.arrayContaining(['no-lithology-map', 'no-conductivity']));
    const part = analyzeWell(w, { surfaceTemperatureC: 10, lithologyConductivity: { marl: 2.0 } });
    expect(part.flags.map((f) => f.code)).toEqual(expect.arrayContaining(['lithology-unmapped', 'conductivity-partial']));
    expect(part.conductivity!.coverage).toBeCloseTo(800 / 1500, 9); // marl 0–800 m of the anchored 0–1500 m
    expect(part.heatFlow!.quality).toBe('medium'); // coverage ≥ 50 % (not low) from a lithology map (not high)
    const rejected = readWells.bind(null);
    expect(() =>
      rejected(parseFeatureCollection('wells', fc(feature('W-L2', ms, { lithologyColumn: [{ topM: 0, bottomM: 10 }] }))).collection.features),
    ).toThrow(/lithologyColumn\[0\]/);
  });

  it("grades high only with equilibrium or Horner data, ≥ 5 points, the well's own column and ≤ 15 %", () => {
    const [w] = wellsOf(fc(feature('W-Q', ms, { conductivityColumn: [{ topM: 0, bottomM: 1600, conductivityWmK: 2.5 }] })));
    expect(analyzeWell(w, { surfaceTemperatureC: 10 }).heatFlow!.quality).toBe('high');
    // The same well with 4 points is medium; with the lithology map, medium; with a constant k, low.
    const [w4] = wellsOf(fc(feature('W-Q4', ms.slice(0, 4), { conductivityColumn: [{ topM: 0, bottomM: 1600, conductivityWmK: 2.5 }] })));
    const r4 = analyzeWell(w4, { surfaceTemperatureC: 10 });
    expect(r4.heatFlow!.quality).toBe('medium');
    expect(r4.heatFlow!.qualityReasons[0]).toContain('4 measured points');
    const [wk] = wellsOf(fc(feature('W-QK', ms)));
    expect(analyzeWell(wk, { surfaceTemperatureC: 10, conductivityWmK: 2.5 }).heatFlow!.quality).toBe('low');
  });
});
