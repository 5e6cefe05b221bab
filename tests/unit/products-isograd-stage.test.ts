import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { runPipeline, type StoredDataset } from '../../server/runs/pipeline.ts';
import { isogradStage } from '../../server/runs/isograd-stage.ts';
import { CAUTION } from '../../shared/caution.ts';
import { check } from '@placemarkio/check-geojson';

const read = (f: string) => readFileSync(new URL(`../../fixtures/demo/${f}`, import.meta.url), 'utf8');
const truth = JSON.parse(readFileSync(new URL('../../fixtures/truth.json', import.meta.url), 'utf8'));

describe('the isograd stage of a run', () => {
  const datasets: Record<string, StoredDataset> = {
    'demo-sites': { kind: 'sites', body: read('sites.geojson') },
    'demo-samples': { kind: 'samples', body: read('samples.geojson') },
    'demo-faults': { kind: 'faults', body: read('faults.geojson') },
    'demo-model': { kind: 'model', body: read('model.json') },
  };

  it('adds the isograds layer and the structure report when the run names samples', async () => {
    const res = await runPipeline(
      {
        sites: 'demo-sites',
        samples: 'demo-samples',
        faults: 'demo-faults',
        model: 'demo-model',
        isothermsC: [300],
        depthsKm: [5],
        grid: { cellKm: 5 },
        isogradDipDeg: truth.faults.find((f: { id: string }) => f.id === 'F1').builtInOffset.isogradDipDeg,
      },
      datasets,
      { extraLayers: [isogradStage] },
    );
    const layer = res.layers.find((l) => l.info.name === 'isograds');
    expect(layer?.info.kind).toBe('vector');
    const text = new TextDecoder().decode(layer!.files[0].bytes);
    check(text); // RFC 7946 validity (@placemarkio/check-geojson)
    const gj = JSON.parse(text);
    expect(gj.caution).toBe(CAUTION);
    expect(new Set(gj.features.map((f: { properties: { mineral: string } }) => f.properties.mineral))).toEqual(
      new Set(['biotite', 'garnet', 'staurolite', 'kyanite', 'sillimanite']),
    );
    const structure = res.summary.structure as { faults: { id: string; higherSide: string; missingZones: unknown }[] };
    // F1's footwall is the higher-grade side (fixtures/truth.json: builtInOffset.higherGradeSide).
    expect(truth.faults.find((f: { id: string }) => f.id === 'F1').builtInOffset.higherGradeSide).toContain('footwall');
    expect(structure.faults.map((f) => f.id)).toEqual(expect.arrayContaining(['F1', 'F2']));
    // The request's isograd dip reaches the fault report: F1's separations carry their dip-slip component, normal,
    // and the constructed dip slip (fixtures/truth.json F1.builtInOffset.dipSlipKm, 1.2 km throw on a 60° fault)
    // lies inside most of the ranges, as in the isograds verb.
    const d = truth.faults.find((f: { id: string }) => f.id === 'F1').builtInOffset.dipSlipKm as number;
    const f1 = (structure.faults as unknown as { id: string; separations: { slipSense?: string; dipSlipKm?: { low: number; high: number | null } }[] }[]).find(
      (f) => f.id === 'F1',
    )!;
    expect(f1.separations.length).toBeGreaterThan(0);
    for (const s of f1.separations) expect(s.slipSense).toBe('normal');
    const covered = f1.separations.filter(
      (s) => s.dipSlipKm !== undefined && d >= s.dipSlipKm.low && (s.dipSlipKm.high === null || d <= s.dipSlipKm.high),
    ).length;
    expect(covered).toBeGreaterThanOrEqual(f1.separations.length - 1);
    // The summary carries what the client plots: the empirical semivariogram beside the fitted model, and the
    // cross-validation scores.
    const interp = res.summary.interpolation as { variogram: { empirical: { lagKm: number; gamma: number; pairs: number }[] } };
    expect(interp.variogram.empirical.length).toBeGreaterThan(5);
    for (const e of interp.variogram.empirical) expect(e.pairs).toBeGreaterThan(0);
    const cv = res.summary.crossValidation as { rmse: number; meanStandardizedError: number };
    expect(Number.isFinite(cv.meanStandardizedError)).toBe(true);
  });

  it('adds nothing when the run has no samples', async () => {
    const res = await runPipeline({ sites: 'demo-sites', model: 'demo-model', isothermsC: [300], depthsKm: [], grid: { cellKm: 8 } }, datasets, {
      extraLayers: [isogradStage],
    });
    expect(res.layers.some((l) => l.info.name === 'isograds')).toBe(false);
    expect(res.summary.structure).toBeUndefined();
  });
});
