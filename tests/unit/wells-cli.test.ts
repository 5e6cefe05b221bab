import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { CAUTION } from '../../shared/caution.ts';
import { VERSION } from '../../shared/version.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';

const root = new URL('../../', import.meta.url).pathname;
const dir = mkdtempSync(join(tmpdir(), 'wells-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function run(args: string[]) {
  const r = spawnSync(process.execPath, [join(root, 'bin/subtherm.mjs'), 'wells', ...args], { cwd: root, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

// Invented wells: a log on 30 °C/km from 10 °C (k = 2.5 → 75 mW/m²), and the Horner worked example BHTs
// (docs/sources.md#horner-bht: T∞ = 105.00 °C at tc = 4 h) with one shallow log.
const good = {
  type: 'FeatureCollection',
  features: [
    {
      type: 'Feature',
      geometry: { type: 'Point', coordinates: [-128.3, -38.4] },
      properties: { id: 'CLI-A', measurements: [250, 500, 750, 1000, 1250, 1500].map((z) => ({ depthM: z, temperatureC: 10 + 0.03 * z, kind: 'log' })) },
    },
    {
      type: 'Feature',
      geometry: { type: 'Point', coordinates: [-128.1, -38.2] },
      properties: {
        id: 'CLI-B',
        measurements: [
          { depthM: 3000, temperatureC: 98.34, kind: 'bht', hoursSinceCirculation: 6, circulationHours: 4 },
          { depthM: 3000, temperatureC: 100.62, kind: 'bht', hoursSinceCirculation: 10, circulationHours: 4 },
          { depthM: 3000, temperatureC: 102.09, kind: 'bht', hoursSinceCirculation: 16, circulationHours: 4 },
          { depthM: 1000, temperatureC: 41.5, kind: 'log' },
        ],
      },
    },
  ],
};

describe('subtherm wells (child process)', () => {
  it('turns good wells into sites with caution and provenance, and prints one JSON object', () => {
    const input = join(dir, 'good.geojson');
    writeFileSync(input, JSON.stringify(good));
    const out = join(dir, 'sites.geojson');
    const r = run(['--wells', input, '--surface-temp-c', '10', '--conductivity-wmk', '2.5', '--out', out, '--json']);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.sites).toBe(2);
    expect(j.files).toEqual([out]);
    expect(Array.isArray(j.warnings)).toBe(true);
    const a = j.wells.find((w: { id: string }) => w.id === 'CLI-A');
    expect(a.gradient.gradientCPerKm).toBeCloseTo(30, 6);
    expect(a.heatFlow.heatFlowMWm2).toBeCloseTo(75, 4);
    const b = j.wells.find((w: { id: string }) => w.id === 'CLI-B');
    expect(b.horner[0].temperatureC).toBeCloseTo(105.0, 2);
    expect(b.row.method).toContain('horner');
    const text = readFileSync(out);
    const fc = JSON.parse(text.toString('utf8'));
    expect(fc.caution).toBe(CAUTION);
    expect(fc.provenance.version).toBe(VERSION);
    expect(fc.provenance.inputs[0].sha256).toBe(createHash('sha256').update(readFileSync(input)).digest('hex'));
    expect(fc.provenance.method).toContain('Horner');
    expect(parseFeatureCollection('sites', fc).collection.features.map((f) => f.properties.id)).toEqual(['CLI-A', 'CLI-B']);
  });

  it('prints a readable table without --json', () => {
    const input = join(dir, 'good2.geojson');
    writeFileSync(input, JSON.stringify(good));
    const r = run(['--wells', input, '--surface-temp-c', '10', '--conductivity-wmk', '2.5']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/CLI-A\s+ok\s+gradient-conductivity/);
    expect(r.stdout).toContain('75.0 ±');
    expect(r.stdout).toContain(CAUTION);
  });

  it('exits 2 on a bad well, naming the well and the field', () => {
    const bad = structuredClone(good);
    bad.features[1].properties.id = 'CLI-BAD';
    (bad.features[1].properties.measurements[3] as { depthM: number }).depthM = -40;
    const input = join(dir, 'bad.geojson');
    writeFileSync(input, JSON.stringify(bad));
    const r = run(['--wells', input, '--surface-temp-c', '10', '--json']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('CLI-BAD');
    expect(r.stderr).toContain('measurements.3.depthM');
    expect(r.stderr).not.toContain('    at '); // no stack trace
    const j = JSON.parse(r.stdout);
    expect(j.error.details[0].feature).toBe('1 (CLI-BAD)');
  });

  it('exits 2 when a polynomial correction has no source', () => {
    const input = join(dir, 'good3.geojson');
    writeFileSync(input, JSON.stringify(good));
    const r = run(['--wells', input, '--correction', 'poly:1,2,0.5']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('--correction-source');
  });

  it('reads CSV wells with an intervals CSV, a lithology map and a model', () => {
    // Invented: a log on 25 °C/km below 10 °C in a column of shale (k 2.0) over granite (k 3.2); the model's
    // one layer (k0 = 3, no heat production) serves only the model check here.
    const rows = ['id,lon,lat,depthM,temperatureC,kind'];
    const t = (z: number) => (z <= 800 ? 10 + 0.03 * z : 10 + 0.03 * 800 + (0.06 / 3.2) * (z - 800)); // q = 60 mW/m²
    for (const z of [200, 400, 600, 800, 1000, 1300, 1600, 1900]) rows.push(`CSV-1,-128.2,-38.3,${z},${t(z).toFixed(3)},log`);
    const wellsCsv = join(dir, 'w.csv');
    writeFileSync(wellsCsv, rows.join('\n') + '\n');
    const iv = join(dir, 'iv.csv');
    writeFileSync(iv, 'id,topM,bottomM,lithology\nCSV-1,0,800,Shale\nCSV-1,800,2000,granite\n');
    const model = join(dir, 'm.json');
    writeFileSync(
      model,
      JSON.stringify({
        surfaceTemperatureC: 10,
        surfaceHeatFlowMWm2: 50,
        layers: [{ bottomKm: 30, conductivityWmK: 3, heatProductionUWm3: 0, densityKgM3: 2700 }],
      }),
    );
    const r = run(['--wells', wellsCsv, '--intervals', iv, '--lithology-k', 'shale=2.0,granite=3.2', '--model', model, '--json']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    const w = j.wells[0];
    expect(w.conductivity.source).toBe('lithology');
    expect(w.heatFlow.method).toBe('bullard');
    expect(w.heatFlow.heatFlowMWm2).toBeCloseTo(60, 2); // slope of T against Σ Δz/k (Bullard 1939)
    expect(w.modelCheck.regional.heatFlowMWm2).toBe(50);
    expect(w.modelCheck.own.heatFlowMWm2).toBeCloseTo(60, 2);
    expect(w.plot.modelRegional.samples.length).toBeGreaterThan(2);
    expect(j.provenance.inputs.map((i: { role: string }) => i.role)).toEqual(['wells', 'intervals', 'model']);
  });
});
