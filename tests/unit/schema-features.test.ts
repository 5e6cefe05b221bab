import { describe, expect, it } from 'vitest';
import { parseFeatureCollection, parsePointCsv } from '../../shared/schema/features.ts';
import { parseCsv } from '../../shared/io/csv.ts';
import { InputError } from '../../shared/errors.ts';

const site = (coords: unknown, props: Record<string, unknown>) => ({ type: 'Feature', geometry: { type: 'Point', coordinates: coords }, properties: props });
const fc = (...features: unknown[]) => ({ type: 'FeatureCollection', features });

function problemsOf(fn: () => unknown) {
  try {
    fn();
  } catch (e) {
    if (e instanceof InputError) return e.details;
    throw e;
  }
  throw new Error('expected an InputError');
}

describe('data set validation', () => {
  it('accepts good sites and keeps extra properties', () => {
    const r = parseFeatureCollection('sites', fc(site([-128, -38], { id: 'a', heatFlowMWm2: 60, quality: 'high', note: 'x' })));
    expect(r.collection.features[0].properties).toMatchObject({ id: 'a', heatFlowMWm2: 60, note: 'x' });
  });

  it('names the feature, the field and the problem', () => {
    const details = problemsOf(() =>
      parseFeatureCollection('sites', fc(site([-128, -38], { id: 'a', heatFlowMWm2: 60 }), site([200, -38], { id: 'b', heatFlowMWm2: 'high' }))),
    );
    expect(details).toEqual(
      expect.arrayContaining([
        expect.objectContaining({ feature: '1 (b)', field: 'geometry.coordinates', problem: expect.stringContaining('longitude') }),
        expect.objectContaining({ feature: '1 (b)', field: 'properties.heatFlowMWm2' }),
      ]),
    );
  });

  it('rejects duplicate ids, empty collections, wrong geometry types and zero-length faults', () => {
    expect(
      problemsOf(() => parseFeatureCollection('sites', fc(site([0, 0], { id: 'a', heatFlowMWm2: 1 }), site([1, 1], { id: 'a', heatFlowMWm2: 2 }))))[0].problem,
    ).toContain('duplicate id');
    expect(() => parseFeatureCollection('sites', fc())).toThrow(/empty/);
    expect(problemsOf(() => parseFeatureCollection('faults', fc(site([0, 0], { id: 'f' }))))[0].field).toBe('geometry.type');
    const zero = {
      type: 'Feature',
      geometry: {
        type: 'LineString',
        coordinates: [
          [1, 1],
          [1, 1],
        ],
      },
      properties: { id: 'z' },
    };
    expect(problemsOf(() => parseFeatureCollection('faults', fc(zero)))[0].problem).toContain('zero length');
  });

  it('rejects NaN and infinite heat flow (JSON cannot carry them; strings are not numbers)', () => {
    expect(() => parseFeatureCollection('sites', fc(site([0, 0], { id: 'a', heatFlowMWm2: Infinity })))).toThrow(InputError);
    expect(() => parseFeatureCollection('sites', fc(site([0, 0], { id: 'a', heatFlowMWm2: 'NaN' })))).toThrow(InputError);
  });

  it('needs a grade on every sample', () => {
    expect(problemsOf(() => parseFeatureCollection('samples', fc(site([0, 0], { id: 's', lithology: 'pelite' }))))[0].problem).toContain('needs a zone');
  });

  it('converts well depths in feet and temperatures in °F (1 ft = 0.3048 m exactly; °C = (°F − 32)·5/9)', () => {
    const w = parseFeatureCollection('wells', fc(site([0, 0], { id: 'w', measurements: [{ depthFt: 1000, temperatureF: 212, kind: 'log' }] })));
    const m = (w.collection.features[0].properties as { measurements: { depthM: number; temperatureC: number }[] }).measurements[0];
    expect(m.depthM).toBeCloseTo(304.8, 12);
    expect(m.temperatureC).toBeCloseTo(100, 12);
  });
});

describe('CSV', () => {
  it('parses quotes, doubled quotes, CRLF and a leading comment line (RFC 4180)', () => {
    const r = parseCsv('# caution\r\na,b\r\n"x, y","say ""hi"""\r\n1,2\r\n');
    expect(r.header).toEqual(['a', 'b']);
    expect(r.rows).toEqual([
      ['x, y', 'say "hi"'],
      ['1', '2'],
    ]);
  });

  it('turns lon/lat rows into validated sites, and names bad cells', () => {
    const r = parsePointCsv('sites', 'lon,lat,id,heatFlowMWm2\n-128,-38,a,61.5\n');
    expect(r.collection.features[0].geometry).toEqual({ type: 'Point', coordinates: [-128, -38] });
    expect(problemsOf(() => parsePointCsv('sites', 'lon,lat,id,heatFlowMWm2\n-128,-38,a,abc\n'))[0]).toMatchObject({
      feature: 'line 2',
      field: 'heatFlowMWm2',
    });
    expect(() => parsePointCsv('sites', 'x,y,heatFlowMWm2\n1,2,3\n')).toThrow(/longitude,latitude/);
  });

  it('groups well rows by id', () => {
    const r = parsePointCsv('wells', 'lon,lat,id,depthM,temperatureC,kind\n1,2,w1,100,15,log\n1,2,w1,200,18,log\n3,4,w2,500,30,bht\n');
    expect(r.collection.features.map((f) => (f.properties as { measurements: unknown[] }).measurements.length)).toEqual([2, 1]);
  });
});

describe('well measurement units', () => {
  it('refuse a depth or temperature given twice in different units', () => {
    const w = (m: Record<string, unknown>) => fc(site([0, 0], { id: 'w', measurements: [{ kind: 'log', ...m }] }));
    expect(problemsOf(() => parseFeatureCollection('wells', w({ depthM: 100, depthFt: 328, temperatureC: 20 })))[0].field).toContain('depthFt');
    expect(problemsOf(() => parseFeatureCollection('wells', w({ depthM: 100, temperatureC: 20, temperatureF: 68 })))[0].field).toContain('temperatureF');
  });
});
