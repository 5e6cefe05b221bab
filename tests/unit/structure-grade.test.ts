import { describe, it, expect } from 'vitest';
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection, type SampleCollection, type FaultCollection } from '../../shared/schema/features.ts';
import { compileModel } from '../../shared/thermal/index.ts';
import { sampleGrades, faciesRankInterval, peakRankInterval, paleoGradients, isogradLayer, buildTrace } from '../../shared/structure/index.ts';

function thrown(f: () => unknown): InputError {
  try {
    f();
  } catch (e) {
    if (e instanceof InputError) return e;
    throw e;
  }
  throw new Error('expected an InputError');
}

const pt = (id: string, lon: number, lat: number, props: Record<string, unknown>) => ({
  type: 'Feature',
  geometry: { type: 'Point', coordinates: [lon, lat] },
  properties: { id, ...props },
});

describe('grade of a sample', () => {
  it('ranks zones on the ordered scale, case- and space-insensitively', () => {
    const g = sampleGrades([
      { id: 'a', zone: 'Garnet zone' },
      { id: 'b', zone: 'sillimanite' },
      { id: 'c', zone: 'chlorite' },
    ]);
    expect(g.map((x) => [x.lo, x.hi, x.zone])).toEqual([
      [2, 2, 'garnet'],
      [5, 5, 'sillimanite'],
      [0, 0, 'chlorite'],
    ]);
  });

  it('an unknown zone is an InputError naming the feature and field, with the nearest valid name', () => {
    const e = thrown(() =>
      sampleGrades([
        { id: 'ok', zone: 'biotite' },
        { id: 'X-7', zone: 'garnett' },
      ]),
    );
    expect(e.message).toContain("unknown zone 'garnett' (did you mean 'garnet'?)");
    expect(e.details[0]).toMatchObject({ feature: '1 (X-7)', field: 'properties.zone' });
    expect(thrown(() => sampleGrades([{ id: 'f', facies: 'amphibolit' }])).message).toContain("did you mean 'amphibolite'?");
  });

  it('a sample without any grade field is an error naming it (schema and kernel)', () => {
    expect(thrown(() => sampleGrades([{ id: 'none' }])).details[0]).toMatchObject({ feature: '0 (none)', field: 'properties.zone' });
    const e = thrown(() => parseFeatureCollection('samples', { type: 'FeatureCollection', features: [pt('s1', 0, 0, { lithology: 'pelite' })] }));
    expect(JSON.stringify(e.details)).toContain('a grade sample needs a zone');
  });

  it('facies-only samples map to rank ranges by the isograd midpoint temperatures', () => {
    // Midpoints (INDEX_MINERAL_ZONES, from memory): 425, 500, 575, 625, 675 °C; greenschist 300–500, amphibolite
    // 500–750, granulite 700–1100 °C in the project's facies diagram.
    expect(faciesRankInterval('greenschist')).toEqual([0, 1]);
    expect(faciesRankInterval('amphibolite')).toEqual([2, 5]);
    expect(faciesRankInterval('granulite')).toEqual([5, 5]);
    expect(faciesRankInterval('zeolite')).toEqual([0, 0]);
    expect(faciesRankInterval('eclogite')).toBeNull();
    const w: string[] = [];
    const g = sampleGrades([{ id: 'e', facies: 'blueschist' }], w);
    expect(g[0]).toMatchObject({ lo: -1, hi: -1, source: 'none', zone: null });
    expect(w.join()).toContain('off the Barrovian sequence');
  });

  it('peak-T-only samples take the ranks certainly and possibly crossed', () => {
    // Isograd ranges (from memory): biotite 400–450, garnet 480–520, staurolite 550–600, kyanite 600–650, sillimanite 650–700 °C.
    expect(peakRankInterval(510)).toEqual([1, 2]);
    expect(peakRankInterval(460)).toEqual([1, 1]);
    expect(peakRankInterval(380)).toEqual([0, 0]);
    expect(peakRankInterval(720)).toEqual([5, 5]);
    const g = sampleGrades([{ id: 'p', peakTemperatureC: 560, peakPressureKbar: 6 }]);
    expect(g[0]).toMatchObject({ lo: 2, hi: 3, source: 'peak-pt', zone: null, series: 'barrovian', label: 'garnet–staurolite' });
  });

  it("warns when a zone disagrees with the sample's own facies", () => {
    const w: string[] = [];
    sampleGrades([{ id: 'q', zone: 'sillimanite', facies: 'greenschist' }], w);
    expect(w[0]).toContain('sample 0 (q)');
  });
});

describe('paleo-gradients', () => {
  it('depth from peak pressure follows P = ρ g z (docs/sources.md#pressure-lithostatic: ρ = 2700, g = 9.81, 10 km → 264.87 MPa)', () => {
    // [derived] 264.87 MPa = 2.6487 kbar; P = ρ·g·z, so z = P/(ρ g) = 10 km.
    const [p] = paleoGradients([{ id: 's', peakTemperatureC: 260, peakPressureKbar: 2.6487 }]);
    expect(p.depthKm).toBeCloseTo(10, 3);
    expect(p.apparentGradientCPerKm).toBeCloseTo(25, 2); // (260 − 10 °C)/10 km, T0 = 10 °C default
    const [q] = paleoGradients([{ id: 's', peakTemperatureC: 560, peakPressureKbar: 6 }], { densityKgM3: 2750 });
    expect(q.depthKm).toBeCloseTo(6e8 / (2750 * 9.81) / 1000, 9); // the lithostatic formula itself
    expect(q.facies).toBe('amphibolite');
  });

  it("with a thermal model: depth where today's geotherm reaches the peak temperature (Turcotte & Schubert 2002 §4-8)", () => {
    // [derived, docs/sources.md#geotherm-exponential] T0 = 10, q0 = 60, A0 = 2.5, hr = 10 km, k = 2.5 → depth to 300 °C = 15.1426 km.
    const cm = compileModel(
      {
        surfaceTemperatureC: 10,
        surfaceHeatFlowMWm2: 60,
        layers: [{ bottomKm: 80, conductivityWmK: 2.5, heatProductionUWm3: 2.5, heatProductionDecayKm: 10, densityKgM3: 2700 }],
      },
      { maxDepthKm: 80 },
    );
    const [p] = paleoGradients([{ id: 's', peakTemperatureC: 300, peakPressureKbar: 2.6487 }], { model: cm });
    expect(p.todayDepthKm).toBeCloseTo(15.1426, 3);
    expect(p.modelDepthKm).toBeCloseTo(10, 3); // the model's density 2700 and g 9.81
    expect(paleoGradients([{ id: 'z', zone: 'garnet' } as never])).toEqual([]);
  });
});

describe('bad fault input', () => {
  const samples = parseFeatureCollection('samples', {
    type: 'FeatureCollection',
    features: [
      pt('a', 0, 0, { zone: 'biotite' }),
      pt('b', 0.1, 0, { zone: 'garnet' }),
      pt('c', 0, 0.1, { zone: 'biotite' }),
      pt('d', 0.1, 0.1, { zone: 'garnet' }),
    ],
  }).collection as SampleCollection;

  it('fewer than two vertices or zero length: the schema names the feature', () => {
    const one = thrown(() =>
      parseFeatureCollection('faults', {
        type: 'FeatureCollection',
        features: [{ type: 'Feature', geometry: { type: 'LineString', coordinates: [[0, 0]] }, properties: { id: 'F9' } }],
      }),
    );
    expect(JSON.stringify(one.details)).toContain('F9');
    const zero = thrown(() =>
      parseFeatureCollection('faults', {
        type: 'FeatureCollection',
        features: [
          {
            type: 'Feature',
            geometry: {
              type: 'LineString',
              coordinates: [
                [0, 0],
                [0, 0],
              ],
            },
            properties: { id: 'F8' },
          },
        ],
      }),
    );
    expect(JSON.stringify(zero.details)).toContain('zero length');
  });

  it('a dip outside (0, 90]° (dip 0 included) gets a message per feature, naming the fault and the field', () => {
    // A dip is measured from the horizontal down to the fault plane, 0–90° (common practice); 0 would be no fault plane.
    const line = (id: string, dipDeg: number) => ({
      type: 'Feature',
      geometry: {
        type: 'LineString',
        coordinates: [
          [0, 0],
          [0.1, 0.1],
        ],
      },
      properties: { id, dipDeg },
    });
    const e = thrown(() =>
      parseFeatureCollection('faults', {
        type: 'FeatureCollection',
        features: [line('F1', 60), line('F2', 95), line('F3', -10), line('F4', 90), line('F5', 0)],
      }),
    );
    const details = e.details as { feature?: unknown; field?: string }[];
    expect(details.length).toBe(3);
    expect(JSON.stringify(details[0])).toContain('F2');
    expect(JSON.stringify(details[1])).toContain('F3');
    // Dip 0 itself is refused (the bound is exclusive), with its own message naming F5.
    expect(JSON.stringify(details[2])).toContain('F5');
    for (const d of details) expect(d.field).toContain('dipDeg');
  });

  it('zero length straight into the layer is an InputError naming the fault, never a crash', () => {
    const faults = {
      type: 'FeatureCollection',
      features: [
        {
          type: 'Feature',
          geometry: {
            type: 'LineString',
            coordinates: [
              [0.05, -0.1],
              [0.05, -0.1],
            ],
          },
          properties: { id: 'F7', kind: 'unknown' },
        },
      ],
    } as unknown as FaultCollection;
    const e = thrown(() => isogradLayer(samples, faults, { cellKm: 0.5 }));
    expect(e.message).toContain('0 (F7)');
  });

  it('a self-intersecting trace is reported as a warning naming the fault', () => {
    expect(
      buildTrace('X', [
        [
          [0, 0],
          [10, 10],
          [10, 0],
          [0, 10],
        ],
      ]).warnings.join(),
    ).toContain('crosses itself');
    const faults = parseFeatureCollection('faults', {
      type: 'FeatureCollection',
      features: [
        {
          type: 'Feature',
          geometry: {
            type: 'LineString',
            coordinates: [
              [0, -0.05],
              [0.1, 0.15],
              [0.1, -0.05],
              [0, 0.15],
            ],
          },
          properties: { id: 'FX' },
        },
      ],
    }).collection as FaultCollection;
    const { report } = isogradLayer(samples, faults, { cellKm: 0.5 });
    expect(report.warnings.join('\n')).toMatch(/fault 0 \(FX\): the trace crosses itself/);
  });
});
