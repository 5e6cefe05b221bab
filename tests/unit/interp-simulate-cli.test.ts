import { describe, it, expect, vi, afterEach, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, writeFileSync, existsSync, rmSync, readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { runCliJson } from '../helpers/cli.ts';
import { readGeoTiff } from '../../server/io/geotiff.ts';

let dir = '';
const bytes = (p: string) => {
  const b = readFileSync(p);
  return b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength);
};
const file = (name: string, body: unknown) => {
  const p = join(dir, name);
  writeFileSync(p, JSON.stringify(body));
  return p;
};
const pt = (id: string, lon: number, lat: number, props: Record<string, unknown> = {}) => ({
  type: 'Feature',
  geometry: { type: 'Point', coordinates: [lon, lat] },
  properties: { id, ...props },
});

const run = (args: string[]) => runCliJson(['simulate', ...args]);

const sites: ReturnType<typeof pt>[] = [];
let pts = '',
  targets = '';
beforeAll(() => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'sim-cli-'));
  for (let i = 0; i < 6; i++)
    for (let j = 0; j < 6; j++) sites.push(pt(`s${i}-${j}`, -128 + i * 0.1, -38 + j * 0.1, { heatFlowMWm2: 50 + 3 * i + 2 * j + ((i * j) % 5) }));
  pts = file('p.geojson', { type: 'FeatureCollection', features: sites });
  targets = file('t.geojson', { type: 'FeatureCollection', features: [pt('free', -127.77, -37.73), pt('on-datum', -128 + 0.2, -38 + 0.3)] });
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));
afterEach(() => vi.restoreAllMocks());

describe('subtherm simulate', () => {
  it('--at: one array per realization in target order; a target on a datum (no nugget) reproduces it; same seed, same numbers', async () => {
    const args = [
      '--points',
      pts,
      '--at',
      targets,
      '--realizations',
      '50',
      '--seed',
      '4',
      '--transform',
      'none',
      '--neighbors',
      'all',
      '--variogram',
      'exponential:0,20,30',
    ];
    const a = await run(args);
    expect(a.code).toBe(0);
    expect(a.json.targets.map((t: { id: string }) => t.id)).toEqual(['free', 'on-datum']);
    expect(a.json.realizations).toHaveLength(50);
    for (const r of a.json.realizations) {
      expect(r).toHaveLength(2);
      expect(r[1]).toBeCloseTo(50 + 3 * 2 + 2 * 3 + 1, 4);
    }
    expect(a.json.variogram).toMatchObject({ model: 'exponential', nugget: 0, partialSill: 20, rangeKm: 30, source: 'fixed' });
    expect(a.json.transform.kind).toBe('none');
    expect(a.json.sampler.kind).toBe('cholesky');
    expect(a.json.caution).toMatch(/Screening/);
    const b = await run(args);
    expect(b.json.realizations).toEqual(a.json.realizations);
  });

  it('grid: mean, sd, P10, P50, P90 GeoTIFFs; normal-score transform keeps values within the tails', async () => {
    const out = join(dir, 'grid');
    const r = await run(['--points', pts, '--out-dir', out, '--size', '30x25', '--realizations', '20', '--seed', '1', '--variogram', 'spherical:0.05,0.95,40']);
    expect(r.code).toBe(0);
    expect(r.json.files.map((f: string) => f.split('/').pop())).toEqual(['mean', 'sd', 'p10', 'p50', 'p90'].map((s) => `heatFlowMWm2.${s}.tif`));
    expect(r.json.sampler.kind).toBe('lattice');
    const p10 = (await readGeoTiff(bytes(join(out, 'heatFlowMWm2.p10.tif')))).grid;
    const p90 = (await readGeoTiff(bytes(join(out, 'heatFlowMWm2.p90.tif')))).grid;
    expect(p10.width).toBe(30);
    expect(p10.height).toBe(25);
    for (let i = 0; i < p10.values.length; i++) expect(p90.values[i]).toBeGreaterThanOrEqual(p10.values[i]);
    const lo = r.json.transform.lowTail,
      hi = r.json.transform.highTail;
    for (const v of p10.values) expect(v).toBeGreaterThanOrEqual(lo - 1e-3);
    for (const v of p90.values) expect(v).toBeLessThanOrEqual(hi + 1e-3);
  });

  it('--trend linear and --decluster auto: the drift and the declustered histogram are reported; bad values name the option', async () => {
    // Invented clustered highs: eight hot sites packed near one corner of the 6 × 6 net of sites.
    const hot = Array.from({ length: 8 }, (_, k) => pt(`h${k}`, -127.52 + 0.01 * (k % 4), -37.52 + 0.01 * Math.floor(k / 4), { heatFlowMWm2: 95 + k }));
    const clustered = file('clustered.geojson', { type: 'FeatureCollection', features: [...sites, ...hot] });
    const base = ['--points', clustered, '--at', targets, '--realizations', '20', '--seed', '3'];
    const r = await run([...base, '--trend', 'linear', '--decluster', 'auto']);
    expect(r.code).toBe(0);
    expect(r.json.trend).toBe('linear');
    expect(r.json.variogram.trend.kind).toBe('linear');
    expect(r.json.sampler.method).toContain('universal kriging with a linear drift');
    const dc = r.json.transform.declustering;
    expect(dc.selectedBy).toBe('minimum declustered mean');
    expect(dc.cellKm).toBeGreaterThan(0);
    // The hot cluster is down-weighted: the declustered mean is below the plain one (computed here from the file).
    const all = [...sites, ...hot].map((f) => (f.properties as Record<string, unknown>).heatFlowMWm2 as number);
    expect(dc.naiveMean).toBeCloseTo(all.reduce((a, b) => a + b, 0) / all.length, 9);
    expect(dc.declusteredMean).toBeLessThan(dc.naiveMean - 1);
    expect(dc.declusteredSd).toBeGreaterThan(0);
    const given = await run([...base, '--decluster', '12.5']);
    expect(given.json.transform.declustering).toMatchObject({ cellKm: 12.5, selectedBy: 'given' });
    for (const [flag, value] of [
      ['--decluster', 'big'],
      ['--decluster', '0'],
      ['--trend', 'cubic'],
    ]) {
      const bad = await run([...base, flag, value]);
      expect(bad.code).toBe(2);
      expect(bad.json.error.details[0].field).toBe(flag.slice(2));
    }
    const noTransform = await run([...base, '--decluster', 'auto', '--transform', 'none']);
    expect(noTransform.code).toBe(2);
    expect(noTransform.json.error.details[0].field).toBe('decluster');
    expect(noTransform.json.error.message).toMatch(/normal-score transform/);
  });

  it('bad input: exit 2 naming the value and the limit; nothing written', async () => {
    const out = join(dir, 'none');
    const big = await run(['--points', pts, '--out-dir', out, '--size', '100x100', '--realizations', '500', '--seed', '1', '--max-values', '1000000']);
    expect(big.code).toBe(2);
    expect(big.json.error.code).toBe('too_many_values');
    expect(big.json.error.message).toMatch(/5,000,000 values, above the memory budget of 1,000,000/);
    expect(existsSync(out) ? readdirSync(out) : []).toEqual([]);
    expect((await run(['--points', pts, '--at', targets, '--realizations', '0', '--seed', '1'])).json.error.details[0].field).toBe('realizations');
    expect((await run(['--points', pts, '--at', targets, '--realizations', '5'])).json.error.details[0].field).toBe('seed');
    expect((await run(['--points', pts, '--at', targets, '--realizations', '5', '--seed', '1', '--trend', 'cubic'])).json.error.details[0].field).toBe('trend');
  });
});
