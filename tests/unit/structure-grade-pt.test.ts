import { describe, it, expect } from 'vitest';
import { stableAluminosilicate, aluminosilicateLines, ALUMINOSILICATE_TRIPLE_POINTS } from '../../shared/petrology/index.ts';
import { peakGrade, sampleGrades, zoneNameProblem } from '../../shared/structure/index.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { InputError } from '../../shared/errors.ts';

// Points read off the aluminosilicate diagram: triple point Holdaway (1971) 501 °C, 3.76 kbar [checked, docs/sources.md#aluminosilicate-triple-point];
// Pattison (1992) about 550 °C, 4.5 kbar [from memory]; reaction-line slopes Ky=And +12, And=Sil −15, Ky=Sil
// +19.6 bar/°C [from memory, docs/sources.md#aluminosilicate-triple-point]. Every point is at least 50 °C or 1 kbar from every line of both calibrations,
// and each line has a point on each side.
const POINTS: { t: number; p: number; polymorph: 'kyanite' | 'andalusite' | 'sillimanite'; line: string }[] = [
  { t: 450, p: 6, polymorph: 'kyanite', line: 'Ky=And high side' },
  { t: 450, p: 1.5, polymorph: 'andalusite', line: 'Ky=And low side' },
  { t: 550, p: 1.0, polymorph: 'andalusite', line: 'And=Sil low-T side' },
  { t: 700, p: 4.0, polymorph: 'sillimanite', line: 'And=Sil high-T side, Ky=Sil low-P side' },
  { t: 700, p: 10.5, polymorph: 'kyanite', line: 'Ky=Sil high-P side' },
  { t: 800, p: 5.0, polymorph: 'sillimanite', line: 'Ky=Sil low-P side' },
];

/**
 * True when (t, p) lies at least 50 °C or 1 kbar from every point of a reaction line, each line being the ray from
 * the triple point that the diagram draws (Ky=And towards low T; And=Sil and Ky=Sil towards high T).
 */
function farFromLines(t: number, p: number, cal: 'holdaway1971' | 'pattison1992'): boolean {
  const tp = ALUMINOSILICATE_TRIPLE_POINTS[cal].temperatureC;
  for (let T = 0; T <= 1100; T += 0.5) {
    const l = aluminosilicateLines(T, cal);
    const onRays = T <= tp ? [l.kyaniteAndalusiteKbar] : [l.andalusiteSillimaniteKbar, l.kyaniteSillimaniteKbar];
    for (const P of onRays) if (P >= 0 && Math.abs(t - T) < 50 && Math.abs(p - P) < 1) return false;
  }
  return true;
}

describe('aluminosilicate field from P–T', () => {
  for (const cal of ['holdaway1971', 'pattison1992'] as const) {
    it(`classifies points well inside each field (${cal})`, () => {
      for (const q of POINTS) {
        // The point really is far from every line of this calibration (the test's own premise).
        expect(farFromLines(q.t, q.p, cal), `${q.t} °C, ${q.p} kbar near a line`).toBe(true);
        expect(stableAluminosilicate(q.t, q.p, cal).polymorph, `${q.t} °C, ${q.p} kbar (${q.line})`).toBe(q.polymorph);
      }
    });
  }
});

describe('grade from peak P–T with pressure', () => {
  it('the aluminosilicate field separates the kyanite zone from the sillimanite zone', () => {
    // 700 °C at 9.5 kbar: 1.8 kbar above Holdaway's Ky=Sil line (7.66 kbar at 700 °C) → kyanite zone, not sillimanite.
    expect(peakGrade(700, 9.5)).toMatchObject({ lo: 4, hi: 4, series: 'barrovian', label: 'kyanite', aluminosilicate: 'kyanite' });
    // 700 °C at 6 kbar: in the sillimanite field above the triple-point pressure → Barrovian sillimanite zone.
    expect(peakGrade(700, 6)).toMatchObject({ lo: 5, hi: 5, series: 'barrovian', label: 'sillimanite' });
    // 800 °C at 5 kbar: sillimanite again.
    expect(peakGrade(800, 5).label).toBe('sillimanite');
    // 620 °C at 8 kbar: kyanite field, inside the kyanite-in temperature range (600–650 °C, from memory) →
    // staurolite–kyanite, never sillimanite.
    expect(peakGrade(620, 8)).toMatchObject({ lo: 3, hi: 4, label: 'staurolite–kyanite' });
  });

  it('the andalusite-bearing low-pressure series is recognised and named on its own scale', () => {
    // 600 °C at 1 kbar: andalusite field, 1.3 kbar below And=Sil (Holdaway) → andalusite zone of the low-pressure series.
    const a = peakGrade(600, 1);
    expect(a).toMatchObject({ series: 'low-pressure', label: 'andalusite (low-pressure series)', aluminosilicate: 'andalusite' });
    // On the Barrovian scale it decides biotite-in only (above it), nothing higher.
    expect([a.lo, a.hi]).toEqual([1, 5]);
    // 680 °C at 2 kbar: 62 °C beyond And=Sil at 2 kbar, below the triple-point pressure → low-pressure sillimanite.
    expect(peakGrade(680, 2)).toMatchObject({ series: 'low-pressure', label: 'sillimanite (low-pressure series)', aluminosilicate: 'sillimanite' });
    // 620 °C at 2.5 kbar is not staurolite–kyanite: kyanite is not stable there.
    expect(peakGrade(620, 2.5).label).not.toMatch(/kyanite/);
    // 380 °C at 1 kbar: below biotite-in on both scales → chlorite.
    expect(peakGrade(380, 1)).toMatchObject({ lo: 0, hi: 0, label: 'chlorite (low-pressure series)' });
  });

  it('a P–T pair outside every field gets a per-sample message, and no zone', () => {
    expect(peakGrade(1200, 5).message).toMatch(/outside every field/);
    // 300 °C at 12 kbar lies in the blueschist field of the project's facies diagram (high P/T).
    expect(peakGrade(300, 12).message).toMatch(/blueschist/);
    const w: string[] = [];
    const g = sampleGrades(
      [
        { id: 'hot', peakTemperatureC: 1200, peakPressureKbar: 5 },
        { id: 'ky', peakTemperatureC: 700, peakPressureKbar: 9.5 },
      ],
      w,
    );
    expect(g[0]).toMatchObject({ lo: -1, source: 'none', label: null });
    expect(g[1]).toMatchObject({ source: 'peak-pt', zone: 'kyanite', series: 'barrovian' });
    expect(w.join('\n')).toMatch(/sample 0 \(hot\): 1200 °C at 5 kbar lies outside every field/);
  });

  it('zone names of the low-pressure scale are accepted; a mistyped one gets the nearest name from both scales', () => {
    const g = sampleGrades([{ id: 'c', zone: 'cordierite' }]);
    expect(g[0]).toMatchObject({ series: 'low-pressure', label: 'cordierite (low-pressure series)', lo: 1, hi: 5 });
    expect(zoneNameProblem('andalusit')).toMatch(/did you mean 'andalusite'/);
    expect(zoneNameProblem('staurolit')).toMatch(/did you mean 'staurolite'/);
    expect(zoneNameProblem('garnet zone')).toBeNull();
  });

  it('the upload schema suggests the nearest zone name, per feature', () => {
    let err: unknown = null;
    try {
      parseFeatureCollection('samples', {
        type: 'FeatureCollection',
        features: [{ type: 'Feature', geometry: { type: 'Point', coordinates: [0, 0] }, properties: { id: 'S-1', zone: 'kyanit' } }],
      });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect(JSON.stringify((err as InputError).details)).toMatch(/did you mean 'kyanite'/);
  });
});
