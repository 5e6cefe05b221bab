import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';

let dir = '';
beforeAll(() => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'structure-cli-'));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// The child's timeout only guards against a hung process: these tests assert no wall time, and on a loaded machine
// the command (Node start, TypeScript loading, the isograd fit) can take minutes, so the limit is generous.
const CHILD_TIMEOUT_MS = 240_000;
const run = (args: string[]) => spawnSync(process.execPath, ['bin/subtherm.mjs', 'isograds', ...args], { encoding: 'utf8', timeout: CHILD_TIMEOUT_MS });

describe('subtherm isograds (child process)', { timeout: 2 * CHILD_TIMEOUT_MS }, () => {
  it('writes the lines with caution and provenance and prints the report', () => {
    const out = join(dir, 'i.geojson');
    const r = run([
      '--samples',
      'fixtures/demo/samples.geojson',
      '--faults',
      'fixtures/demo/faults.geojson',
      '--model',
      'fixtures/demo/model.json',
      '--out',
      out,
      '--json',
    ]);
    expect(r.status, r.stderr).toBe(0);
    const lines = r.stdout.trim().split('\n');
    expect(lines.length).toBe(1);
    const j = JSON.parse(lines[0]);
    expect(j.isograds.map((i: { isograd: string }) => i.isograd)).toEqual(['biotite-in', 'garnet-in', 'staurolite-in', 'kyanite-in', 'sillimanite-in']);
    const f1 = j.faults.find((f: { id: string }) => f.id === 'F1');
    expect(Object.keys(f1)).toEqual(expect.arrayContaining(['id', 'repeatedZones', 'missingZones', 'notReached', 'offsetOnly', 'separations']));
    expect(f1.notReached).toContainEqual({ isograd: 'sillimanite-in', side: 'right', sideName: 'ESE side (hanging wall)' });
    for (const s of f1.separations) {
      expect(Object.keys(s)).toEqual(expect.arrayContaining(['isograd', 'end', 'separationKm', 'sense']));
      expect(s.separationKm.low).toBeLessThanOrEqual(s.separationKm.value);
      // An upper bound is a number at least the value, or null (open) with its reason.
      if (s.separationKm.high === null) expect(s.separationKm.openReason).toBe('beyond sampled support');
      else expect(s.separationKm.high).toBeGreaterThanOrEqual(s.separationKm.value);
    }
    expect(f1.separations.filter((s: { separationKm: { high: number | null } }) => s.separationKm.high === null).length).toBe(1);
    expect(j.samples.length).toBe(402);
    expect(j.samples[0]).toEqual(expect.objectContaining({ id: expect.any(String), source: expect.stringMatching(/^(zone|facies|peak-pt|none)$/) }));
    expect(Array.isArray(j.misfits) && Array.isArray(j.paleoGradients)).toBe(true);
    // With the demo model: today's depth to each sample's peak temperature is given.
    expect(j.paleoGradients.some((p: { todayDepthKm: number | null }) => p.todayDepthKm !== null)).toBe(true);
    const geo = JSON.parse(readFileSync(out, 'utf8'));
    expect(geo.type).toBe('FeatureCollection');
    expect(geo.caution).toMatch(/Screening estimates only/);
    expect(geo.provenance.version).toMatch(/^\d+\.\d+\.\d+$/);
    expect(geo.provenance.method).toMatch(/indicator kriging/);
    for (const f of geo.features) expect([0.1, 0.5, 0.9]).toContain(f.properties.probability);
    const sha = createHash('sha256').update(readFileSync('fixtures/demo/samples.geojson')).digest('hex');
    expect(geo.provenance.inputs.samples).toBe(sha);
    expect(geo.features.length).toBeGreaterThan(10);
  });

  it('an unknown zone name exits 2 with the suggestion, no stack trace', () => {
    const bad = join(dir, 'bad.geojson');
    writeFileSync(
      bad,
      JSON.stringify({
        type: 'FeatureCollection',
        features: [
          { type: 'Feature', geometry: { type: 'Point', coordinates: [-128, -38] }, properties: { id: 'G1', zone: 'biotite' } },
          { type: 'Feature', geometry: { type: 'Point', coordinates: [-127.9, -38] }, properties: { id: 'G2', zone: 'garnett' } },
        ],
      }),
    );
    const r = run(['--samples', bad, '--out', join(dir, 'x.geojson')]);
    expect(r.status).toBe(2);
    expect(r.stderr).toContain("unknown zone 'garnett' (did you mean 'garnet'?)");
    expect(r.stderr).toContain('1 (G2)');
    expect(r.stderr).not.toMatch(/at .*\.ts:\d+/);
  });

  it('--variogram MODEL:NUGGET,PARTIAL_SILL,RANGE_KM is used for every isograd and reported as given', () => {
    // Invented samples on a 10 × 10 lattice 0.05° apart, the zone rising eastwards one rank every two columns.
    const features = [];
    for (let i = 0; i < 10; i++)
      for (let k = 0; k < 10; k++)
        features.push({
          type: 'Feature',
          geometry: { type: 'Point', coordinates: [-128 + 0.05 * i, -38 + 0.05 * k] },
          properties: { id: `V${i}-${k}`, zone: ['chlorite', 'biotite', 'garnet', 'staurolite', 'kyanite', 'sillimanite'][Math.floor(i / 2)] },
        });
    const file = join(dir, 'lattice.geojson');
    writeFileSync(file, JSON.stringify({ type: 'FeatureCollection', features }));
    const r = run(['--samples', file, '--variogram', 'spherical:0.02,0.2,18', '--json']);
    expect(r.status, r.stderr).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.isograds.map((i: { variogram: { source: string; rangeKm: number } }) => [i.variogram.source, i.variogram.rangeKm])).toEqual(
      Array(5).fill(['given', 18]),
    );
    expect(j.method.indicator).toContain('the given spherical variogram for every isograd (nugget 0.02, partial sill 0.2, range 18 km)');
    // Without it each isograd takes its own fit where it succeeds, else the median-indicator one, and the method says which.
    const auto = JSON.parse(run(['--samples', file, '--json']).stdout);
    const sources: string[] = auto.isograds.map((i: { variogram: { source: string } }) => i.variogram.source);
    for (const q of sources) expect(['fitted', 'median-indicator']).toContain(q);
    expect(auto.method.indicator).toMatch(/its own fitted spherical indicator variogram for [a-z]+-in/);
    expect(auto.method.indicator).not.toContain('given');
    // A bare model name (the fit is spherical) or a variogram with inverse-distance weighting: exit 2 naming the option.
    for (const args of [
      ['--variogram', 'exponential'],
      ['--method', 'idw', '--variogram', 'spherical:0,0.2,10'],
    ]) {
      const e = run(['--samples', file, ...args]);
      expect(e.status).toBe(2);
      expect(e.stderr).toContain('--variogram');
    }
  });

  it('a bad option exits 2 naming it', () => {
    const r = run(['--samples', 'fixtures/demo/samples.geojson', '--cell-km', '0']);
    expect(r.status).toBe(2);
    expect(r.stderr).toContain('--cell-km');
  });
});
