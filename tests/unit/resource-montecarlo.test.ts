import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { kmFromLonLat, trueHeatFlowMWm2 } from '../../fixtures/field.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { gridRowAreasM2 } from '../../shared/geodesy/index.ts';
import {
  SUM_BLOCK,
  allocateResourceOutput,
  areaTotals,
  assessHeatInPlace,
  combineSums,
  parseHeatInPlaceOptions,
  prepareResource,
  resourceRange,
  type ResourceSpec,
} from '../../shared/resource/index.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';

const uncertain = parseThermalModel(JSON.parse(readFileSync(new URL('../../fixtures/demo/model-uncertain.json', import.meta.url), 'utf8')));

// A small lon/lat grid over the invented demo region, heat flow from the demo's truth (fixtures/field.ts).
function demoGrid(W: number, H: number): { hf: Grid; sd: Grid } {
  const west = -129,
    north = -37.2,
    dx = 2 / W,
    dy = 1.6 / H;
  const v = new Float32Array(W * H),
    s = new Float32Array(W * H);
  for (let r = 0; r < H; r++)
    for (let c = 0; c < W; c++) {
      const [x, y] = kmFromLonLat(west + (c + 0.5) * dx, north - (r + 0.5) * dy);
      v[r * W + c] = trueHeatFlowMWm2(x, y);
      s[r * W + c] = 3 + (c % 5);
    }
  v[5] = NaN; // one no-data cell
  const base = { width: W, height: H, west, north, dx, dy, crs: 'EPSG:4326' };
  return { hf: { ...base, values: v, units: 'mW/m²' }, sd: { ...base, values: s, units: 'mW/m²' } };
}

const POLY = {
  type: 'Polygon' as const,
  coordinates: [
    [
      [-128.8, -37.4],
      [-128.0, -37.4],
      [-127.6, -38.2],
      [-128.8, -38.2],
      [-128.8, -37.4],
    ],
  ],
};

function spec(hf: Grid, sd: Grid | undefined, N: number, seed: number, extra: Partial<ResourceSpec> = {}): ResourceSpec {
  return {
    models: [uncertain],
    heatFlowMWm2: hf.values,
    heatFlowSdMWm2: sd?.values,
    width: hf.width,
    rowAreaM2: gridRowAreasM2(hf).rowAreaM2,
    window: { topKm: 3, bottomKm: 7, minTempC: 150, refTempC: 15 },
    parameters: {
      rhoCMJm3K: 2.7,
      recoveryFactor: { dist: 'triangular', min: 0.05, mode: 0.1, max: 0.2 },
      utilizationEfficiency: { dist: 'uniform', min: 0.35, max: 0.45 },
      lifeYears: 30,
    },
    realizations: N,
    seed,
    ...extra,
  };
}

describe('heat in place over a grid', () => {
  const { hf, sd } = demoGrid(48, 40);

  it('within a realization, a total is the sum of its cells', () => {
    // Nominal run: Σ density × cell area equals the grid total.
    const s1 = spec(hf, sd, 1, 5);
    const prep = prepareResource(s1);
    const out = allocateResourceOutput(prep);
    resourceRange(prep, 0, prep.cells, out);
    const t = areaTotals(prep, combineSums(prep, out))[0];
    let nomPJ = 0,
      realPJ = 0,
      realMWe = 0;
    for (let c = 0; c < prep.cells; c++) {
      const a = s1.rowAreaM2[Math.floor(c / hf.width)] / 1e6;
      if (Number.isFinite(out.nominalHeatPJkm2[c])) nomPJ += out.nominalHeatPJkm2[c] * a;
      // With one realization each cell's p50 is that realization's value.
      if (Number.isFinite(out.heatPJkm2!.p50[c])) {
        realPJ += out.heatPJkm2!.p50[c] * a;
        realMWe += out.electricMWekm2!.p50[c] * a;
      }
    }
    // Float32 densities: 1e-6 relative.
    expect(nomPJ / (t.heatInPlaceJ.nominal! / 1e15)).toBeCloseTo(1, 6);
    expect(realPJ / (t.heatInPlaceJ.p50! / 1e15)).toBeCloseTo(1, 6);
    expect(realMWe / t.electricMWe.p50!).toBeCloseTo(1, 6);
    expect(t.cells).toBe(hf.width * hf.height - 1);
    // Recoverable = Rg × heat in the same realization; thermal power = recoverable / life.
    expect(t.recoverableJ.p50! / t.heatInPlaceJ.p50!).toBeCloseTo(prep.params.recoveryFactor[0], 12);
    expect(t.thermalMWt.p50!).toBeCloseTo(t.recoverableJ.p50! / (30 * 365.25 * 86400) / 1e6, 6);
  });

  it('orders P10 ≤ P50 ≤ P90 per cell and for totals, and reproduces with the seed', () => {
    const opts = parseHeatInPlaceOptions({ realizations: 64, seed: 11, recoveryFactor: { dist: 'truncnormal', mean: 0.1, sd: 0.03, min: 0.05, max: 0.2 } });
    const a = assessHeatInPlace({ heatFlow: hf, heatFlowSd: sd, model: uncertain, polygon: POLY, options: opts });
    const b = assessHeatInPlace({ heatFlow: hf, heatFlowSd: sd, model: uncertain, polygon: POLY, options: opts });
    expect(JSON.stringify(b.report)).toBe(JSON.stringify(a.report));
    for (const t of [a.report.totals.grid, a.report.totals.polygon!]) {
      for (const k of ['heatInPlaceJ', 'recoverableJ', 'thermalMWt', 'electricMWe', 'meanReservoirTempC'] as const) {
        const v = t[k];
        expect(v.p10!).toBeLessThanOrEqual(v.p50!);
        expect(v.p50!).toBeLessThanOrEqual(v.p90!);
        expect(v.p10!).toBeLessThan(v.p90!);
      }
    }
    const E = a.output.electricMWekm2!;
    let n = 0;
    for (let c = 0; c < E.p10.length; c++)
      if (Number.isFinite(E.p50[c])) {
        expect(E.p10[c]).toBeLessThanOrEqual(E.p50[c]);
        expect(E.p50[c]).toBeLessThanOrEqual(E.p90[c]);
        n++;
      }
    expect(n).toBe(hf.width * hf.height - 1);
    const c = assessHeatInPlace({ heatFlow: hf, heatFlowSd: sd, model: uncertain, polygon: POLY, options: { ...opts, seed: 12 } });
    expect(c.report.electricMWe.p50).not.toBe(a.report.electricMWe.p50);
    // The polygon is part of the grid.
    expect(a.report.totals.polygon!.heatInPlaceJ.p50!).toBeLessThan(a.report.totals.grid.heatInPlaceJ.p50!);
    expect(a.report.area).toBe('polygon');
    expect(a.report.electricMWe).toEqual(a.report.totals.polygon!.electricMWe);
  });

  it('does not depend on chunking (bit-identical totals and cells)', () => {
    const opts = parseHeatInPlaceOptions({ realizations: 24, seed: 3, heatFlowErrorCorrelation: 'independent' });
    const runs = [SUM_BLOCK, 2 * SUM_BLOCK, 1 << 20].map((chunkCells) =>
      assessHeatInPlace({ heatFlow: hf, heatFlowSd: sd, model: uncertain, polygon: POLY, options: opts, chunkCells }),
    );
    for (const r of runs.slice(1)) {
      expect(JSON.stringify(r.report)).toBe(JSON.stringify(runs[0].report));
      expect(Buffer.from(r.output.electricMWekm2!.p10.buffer).equals(Buffer.from(runs[0].output.electricMWekm2!.p10.buffer))).toBe(true);
    }
    // Ranges out of order also give the same sums.
    const s = spec(hf, sd, 24, 3, { heatFlowErrorCorrelation: 'independent' });
    const prep = prepareResource(s);
    const o1 = allocateResourceOutput(prep),
      o2 = allocateResourceOutput(prep);
    resourceRange(prep, 0, prep.cells, o1);
    resourceRange(prep, SUM_BLOCK, prep.cells, o2);
    resourceRange(prep, 0, SUM_BLOCK, o2);
    expect(Buffer.from(o2.blockSums.buffer).equals(Buffer.from(o1.blockSums.buffer))).toBe(true);
    expect(() => resourceRange(prep, 100, 700, o2)).toThrow(RangeError);
  });

  it('takes totals from per-realization sums: independent errors narrow the total, not the cells', () => {
    // Only heat-flow error here (fixed model and parameters), so the difference comes from the correlation alone.
    const fixed = parseThermalModel(JSON.parse(readFileSync(new URL('../../fixtures/demo/model.json', import.meta.url), 'utf8')));
    const big = { ...sd, values: sd.values.map((v) => v * 3) };
    const base = { realizations: 200, seed: 9 };
    const full = assessHeatInPlace({
      heatFlow: hf,
      heatFlowSd: big,
      model: fixed,
      options: parseHeatInPlaceOptions({ ...base, heatFlowErrorCorrelation: 'full' }),
    });
    const ind = assessHeatInPlace({
      heatFlow: hf,
      heatFlowSd: big,
      model: fixed,
      options: parseHeatInPlaceOptions({ ...base, heatFlowErrorCorrelation: 'independent' }),
    });
    const spread = (t: { p10: number | null; p90: number | null }) => t.p90! - t.p10!;
    expect(spread(ind.report.heatInPlaceJ)).toBeLessThan(0.5 * spread(full.report.heatInPlaceJ));
    // The sum of the cells' P10 is below the independent total's P10 (summing cell percentiles would be wrong).
    const area = gridRowAreasM2(hf).rowAreaM2;
    let sumP10 = 0;
    const P = ind.output.heatPJkm2!.p10;
    for (let c = 0; c < P.length; c++) if (Number.isFinite(P[c])) sumP10 += P[c] * (area[Math.floor(c / hf.width)] / 1e6);
    expect(sumP10 * 1e15).toBeLessThan(0.97 * ind.report.heatInPlaceJ.p10!);
  });

  it('counts rejected draws and leaves them out', () => {
    // A normal recovery factor around 0.1 with sd 0.08 goes ≤ 0 in about 10 % of draws: those are rejected.
    const opts = parseHeatInPlaceOptions({ realizations: 200, seed: 2, recoveryFactor: { dist: 'normal', mean: 0.1, sd: 0.08 } });
    const r = assessHeatInPlace({ heatFlow: hf, model: uncertain, options: opts });
    const mc = r.report.monteCarlo!;
    expect(mc.rejected).toBeGreaterThan(5);
    expect(mc.rejected).toBeLessThan(40);
    expect(mc.accepted + mc.rejected).toBe(200);
    expect(mc.firstRejection).toMatch(/recoveryFactor/);
    expect(r.report.warnings.join(' ')).toMatch(/left out/);
    expect(r.report.recoverableJ.p10!).toBeGreaterThan(0);
  });

  it('gives per-zone totals that add up to the grid total', () => {
    const labels = new Int32Array(hf.width * hf.height);
    for (let c = 0; c < labels.length; c++) labels[c] = c % hf.width < 20 ? 0 : 1;
    const r = assessHeatInPlace({
      heatFlow: hf,
      model: uncertain,
      zones: { names: ['west', 'east'], labels, overlapCells: 0, source: 'class grid' },
      options: parseHeatInPlaceOptions({ realizations: 1, seed: 4 }),
    });
    const z = r.report.totals.zones!;
    expect(z.map((x) => x.zone)).toEqual(['west', 'east']);
    expect((z[0].heatInPlaceJ.nominal! + z[1].heatInPlaceJ.nominal!) / r.report.totals.grid.heatInPlaceJ.nominal!).toBeCloseTo(1, 12);
    expect((z[0].electricMWe.p50! + z[1].electricMWe.p50!) / r.report.totals.grid.electricMWe.p50!).toBeCloseTo(1, 12);
    expect(z[0].areaKm2 + z[1].areaKm2).toBeCloseTo(r.report.totals.grid.areaKm2, 6);
  });

  it('leaves percentiles null without realizations and labels every route', () => {
    const r = assessHeatInPlace({ heatFlow: hf, model: uncertain, options: parseHeatInPlaceOptions({ conversionEfficiency: 0.12 }) });
    expect(r.report.electricMWe.p50).toBeNull();
    expect(r.report.electricMWe.nominal!).toBeGreaterThan(0);
    expect(r.report.monteCarlo).toBeNull();
    expect(r.report.method.route).toBe('exergy');
    expect((r.report.method.routes as { id: string }[]).map((x) => x.id)).toEqual(['exergy', 'thermal', 'thermal-x-conversion']);
    // Conversion route = ηc × thermal power (labelled as a different route).
    expect(r.report.electricMWeConversion.nominal! / r.report.thermalMWt.nominal!).toBeCloseTo(0.12, 12);
    expect(r.report.method.exceedance).toMatch(/"P90"/);
  });
});
