import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { kmFromLonLat, truePeakTemperatureC, zoneIndexFromTemperature, ZONES, trueHeatFlowMWm2, riftShare, HEAT_FLOW, REGION } from '../../fixtures/field.ts';

const root = new URL('../..', import.meta.url).pathname;
const demo = (f: string) => JSON.parse(readFileSync(join(root, 'fixtures', 'demo', f), 'utf8'));
const truth = JSON.parse(readFileSync(join(root, 'fixtures', 'truth.json'), 'utf8'));

describe('demo region fixtures', () => {
  it('regenerate byte-identically from the seeded generator', () => {
    const r = spawnSync(process.execPath, ['--import', 'tsx', join(root, 'fixtures', 'generate.ts'), '--check'], { encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
  });

  it('hold the promised numbers of sites, samples, faults and wells, all valid', () => {
    const sites = parseFeatureCollection('sites', demo('sites.geojson')).collection.features;
    const samples = parseFeatureCollection('samples', demo('samples.geojson')).collection.features;
    const faults = parseFeatureCollection('faults', demo('faults.geojson')).collection.features;
    const wells = parseFeatureCollection('wells', demo('wells.geojson')).collection.features;
    expect(sites.length).toBeGreaterThanOrEqual(150);
    expect(sites.length).toBeLessThanOrEqual(400);
    expect(samples.length).toBeGreaterThanOrEqual(150);
    expect(samples.length).toBeLessThanOrEqual(450); // with the traverses along F1 and across F2
    expect(faults.length).toBeGreaterThanOrEqual(6);
    expect(faults.map((f) => f.properties.kind)).toEqual(expect.arrayContaining(['normal', 'thrust']));
    expect(wells.length).toBeGreaterThanOrEqual(3);
    // Every zone of the sequence is present, and some samples carry peak P–T.
    const zones = new Set(samples.map((s) => s.properties.zone).filter(Boolean));
    for (const z of ZONES) expect(zones.has(z)).toBe(true);
    expect(samples.filter((s) => s.properties.peakTemperatureC !== undefined).length).toBeGreaterThanOrEqual(3);
  });

  it('sit in open ocean near 38° S 128° W, inside a box of about 200 km', () => {
    const sites = demo('sites.geojson').features as { geometry: { coordinates: [number, number] } }[];
    for (const s of sites) {
      const [x, y] = kmFromLonLat(...s.geometry.coordinates);
      expect(Math.abs(x)).toBeLessThanOrEqual(REGION.halfSizeKm);
      expect(Math.abs(y)).toBeLessThanOrEqual(REGION.halfSizeKm);
    }
  });

  it('sample the stated heat-flow field: rift 90–130, cool block 40–55 mW/m², granite high', () => {
    // Evaluate the truth on a km grid: the rift core, the old block (far from rift and granite), the granite centre.
    const rift: number[] = [],
      block: number[] = [];
    for (let x = -100; x <= 100; x += 2) {
      for (let y = -100; y <= 100; y += 2) {
        const q = trueHeatFlowMWm2(x, y);
        const g = Math.hypot(x - HEAT_FLOW.granite.xKm, y - HEAT_FLOW.granite.yKm);
        if (riftShare(x, y) > 0.95) rift.push(q);
        if (riftShare(x, y) < 0.01 && g > 40) block.push(q);
      }
    }
    expect(Math.min(...rift)).toBeGreaterThanOrEqual(90);
    expect(Math.max(...rift)).toBeLessThanOrEqual(130);
    expect(Math.min(...block)).toBeGreaterThanOrEqual(40);
    expect(Math.max(...block)).toBeLessThanOrEqual(55);
    const gr = trueHeatFlowMWm2(HEAT_FLOW.granite.xKm, HEAT_FLOW.granite.yKm);
    expect(gr - trueHeatFlowMWm2(HEAT_FLOW.granite.xKm + 40, HEAT_FLOW.granite.yKm)).toBeGreaterThan(20);
    // Site values scatter about the truth by their quality's noise (sd 3/6/12 mW/m²): RMS of standardized error ≈ 1.
    const sites = demo('sites.geojson').features as { geometry: { coordinates: [number, number] }; properties: { heatFlowMWm2: number; quality: string } }[];
    const sd: Record<string, number> = truth.heatFlow.noiseSdByQualityMWm2;
    const z2 = sites.map((s) => ((s.properties.heatFlowMWm2 - trueHeatFlowMWm2(...kmFromLonLat(...s.geometry.coordinates))) / sd[s.properties.quality]) ** 2);
    const rms = Math.sqrt(z2.reduce((a, b) => a + b, 0) / z2.length);
    expect(rms).toBeGreaterThan(0.8);
    expect(rms).toBeLessThan(1.2);
  });

  it('label samples with the zone of the true peak-temperature field, except the listed mislabelled ones', () => {
    const samples = demo('samples.geojson').features as { geometry: { coordinates: [number, number] }; properties: { id: string; zone?: string } }[];
    const mislabelled = new Set<string>(truth.dome.mislabelledSamples);
    let checked = 0;
    for (const s of samples) {
      if (!s.properties.zone) continue;
      // Coordinates are rounded to 1e-6° (≈ 0.1 m): recompute the zone from the stored position.
      const z = ZONES[zoneIndexFromTemperature(truePeakTemperatureC(...kmFromLonLat(...s.geometry.coordinates)))];
      if (mislabelled.has(s.properties.id)) expect(s.properties.zone).not.toBe(z);
      else expect(s.properties.zone).toBe(z);
      checked++;
    }
    expect(checked).toBeGreaterThan(150);
  });

  it('record the built-in fault offsets and the separations they cause along each trace', () => {
    const f1 = truth.isogradSeparations.filter((s: { fault: string }) => s.fault === 'F1');
    // F1 moves every isograd 6 km inwards on its hanging wall; along the trace that is 6.0–6.5 km (chord geometry).
    for (const s of f1.filter((s: { separationKm?: number[] }) => s.separationKm))
      for (const d of s.separationKm) {
        expect(d).toBeGreaterThan(6.0);
        expect(d).toBeLessThan(6.5);
      }
    expect(truth.faults.find((f: { id: string }) => f.id === 'F1').builtInOffset.isogradShiftKm).toBeCloseTo(6, 9);
    expect(truth.faults.find((f: { id: string }) => f.id === 'F2').builtInOffset.repeatedZones).toEqual(['chlorite', 'biotite', 'garnet']);
    // Pure dip slip on F1: d = throw / sin(dip) = 1.2 km / sin 60° (right-triangle geometry).
    expect(truth.faults.find((f: { id: string }) => f.id === 'F1').builtInOffset.dipSlipKm).toBeCloseTo(1.2 / Math.sin(Math.PI / 3), 9);
  });

  it('ship a terrain GeoTIFF that GDAL reads as 4326, at least 400 × 400, with NoData', () => {
    const r = spawnSync('gdalinfo', ['-json', join(root, 'fixtures', 'demo', 'terrain.tif')], { encoding: 'utf8' });
    if (r.error) throw new Error('gdalinfo not found: install gdal-bin (apt-get install -y gdal-bin; bash .ci/run does this)');
    const info = JSON.parse(r.stdout);
    expect(info.size[0]).toBeGreaterThanOrEqual(400);
    expect(info.size[1]).toBeGreaterThanOrEqual(400);
    expect(info.bands[0].type).toBe('Float32');
    expect(info.bands[0].noDataValue).toBe(-9999);
    expect(info.coordinateSystem.wkt).toContain('ID["EPSG",4326]');
    expect(info.geoTransform[0]).toBeCloseTo(-129.17, 9);
    expect(info.geoTransform[3]).toBeCloseTo(-37.08, 9);
  });
});
