import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import type { Grid } from '../../shared/grid/grid.ts';
import { rasterizeZones, cellsInsideRings } from '../../shared/grid/polygon-cells.ts';
import { classifyFacies } from '../../shared/petrology/index.ts';
import {
  basalHeatFlow,
  columnLimits,
  compileModel,
  limitedIsothermDepth,
  limitedTemperature,
  lithostaticPressureMPa,
  nominalModel,
  solveModelColumn,
  type CompiledModel,
} from '../../shared/thermal/index.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { applyLayerOverride, overrideFromProperties } from '../../shared/products/overrides.ts';
import {
  computeThermalGrids,
  inconsistencyCounts,
  planThermalGrids,
  allocateThermalGridBuffers,
  computeThermalGridRows,
} from '../../shared/products/thermal-grids.ts';
import { FACIES_CODES, faciesNameOfCode } from '../../shared/products/facies-grid.ts';
import { InputError } from '../../shared/errors.ts';

const demo = parseModelText(readFileSync(new URL('../../fixtures/demo/model.json', import.meta.url), 'utf8'), 'model.json');

function heatFlowGrid(width: number, height: number, f: (c: number, r: number) => number): Grid<Float32Array> {
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) values[r * width + c] = f(c, r);
  return { width, height, values, west: 10, north: 50, dx: 0.1, dy: 0.1, crs: 'EPSG:4326', units: 'mW/m²' };
}

describe('model documents', () => {
  it('keeps the demo model\'s descriptive "name" and refuses any other unknown top-level member, naming it', () => {
    expect(demo.name).toContain('Orrindel');
    expect(demo.model.layers).toHaveLength(4);
    const extra = JSON.stringify({ surfaceTemperatureC: 10, colour: 'red', layers: [{ bottomKm: 30, conductivityWmK: 2.5, heatProductionUWm3: 1 }] });
    let err: unknown;
    try {
      parseModelText(extra, 'm.json');
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).code).toBe('invalid_model');
    expect((err as InputError).details).toEqual([expect.objectContaining({ feature: 'model', field: 'colour' })]);
  });
  it('still rejects a misspelt layer field', () => {
    const bad = JSON.stringify({ surfaceTemperatureC: 10, layers: [{ bottomKm: 30, conductivityWmK: 2.5, heatProductionUWm: 1 }] });
    expect(() => parseModelText(bad, 'm.json')).toThrow(InputError);
  });
});

describe('layer overrides (amend by name, insert new names by bottomKm, or replace)', () => {
  const base = demo.model;
  it('amends a named layer, removes a field given as null, keeps the rest', () => {
    const m = applyLayerOverride(
      base,
      overrideFromProperties({ layers: [{ name: 'Upper Crust', heatProductionUWm3: 3.5, heatProductionDecayKm: null }] }, 'r')!,
    );
    expect(m.layers[0].heatProductionUWm3).toBe(3.5);
    expect(m.layers[0].heatProductionDecayKm).toBeUndefined();
    expect(m.layers[0].conductivityWmK).toBe(3);
    expect(m.layers.slice(1)).toEqual(base.layers.slice(1));
  });
  it('inserts a new layer where its bottom falls, the layer below now starting at its bottom', () => {
    const m = applyLayerOverride(
      base,
      overrideFromProperties({ layers: [{ name: 'basin fill', bottomKm: 3, conductivityWmK: 2, heatProductionUWm3: 1, densityKgM3: 2300 }] }, 'r')!,
    );
    expect(m.layers.map((l) => l.name)).toEqual(['basin fill', 'upper crust', 'middle crust', 'lower crust', 'upper mantle']);
    expect(m.layers.map((l) => l.bottomKm)).toEqual([3, 15, 25, 35, 60]);
  });
  it('replaces the whole stack with mode "replace"', () => {
    const m = applyLayerOverride(
      base,
      overrideFromProperties(
        { mode: 'replace', layers: [{ name: 'one', bottomKm: 40, conductivityWmK: 2.5, heatProductionUWm3: 1, densityKgM3: 2700 }] },
        'r',
      )!,
    );
    expect(m.layers).toHaveLength(1);
    expect(m.surfaceTemperatureC).toBe(12);
  });
  it('names the region and layer of a bad override', () => {
    const err = (props: Record<string, unknown>) => {
      try {
        applyLayerOverride(base, overrideFromProperties(props, 'regions[3] (basin)')!);
      } catch (e) {
        return e as InputError;
      }
      return null;
    };
    expect(err({ layers: [{ heatProductionUWm3: 1 }] })?.message).toContain('regions[3] (basin)');
    expect(err({ layers: [{ name: 'new', conductivityWmK: 2 }] })?.details[0].field).toBe('layers[0].bottomKm');
    expect(err({ layers: [{ name: 'upper crust', bottomKm: 30 }] })).toBeInstanceOf(InputError); // bottoms no longer increase
    expect(() => overrideFromProperties({ layers: [{ name: 'x' }], mode: 'merge' }, 'r')).toThrow(/amend.*replace/);
  });
});

describe('zone rasterisation (even–odd, by cell centre)', () => {
  const spec = { width: 10, height: 10, west: 0, north: 10, dx: 1, dy: 1, crs: 'EPSG:4326' };
  it('marks the cells whose centres are inside, holes excluded, later polygons on top', () => {
    const square = [
      [
        [2, 2],
        [8, 2],
        [8, 8],
        [2, 8],
        [2, 2],
      ],
    ];
    const withHole = [
      [
        [2, 2],
        [8, 2],
        [8, 8],
        [2, 8],
        [2, 2],
      ],
      [
        [4, 4],
        [6, 4],
        [6, 6],
        [4, 6],
        [4, 4],
      ],
    ];
    const z = rasterizeZones(spec, [
      withHole,
      [
        [
          [0, 0],
          [3, 0],
          [3, 3],
          [0, 3],
        ],
      ],
    ]);
    // Centres x = c + 0.5: the square [2, 8] holds columns 2..7; rows from the north: y = 9.5 − r, rows 2..7.
    let inFirst = 0;
    for (let i = 0; i < 100; i++) if (z[i] === 1) inFirst++;
    // 36 cells of the square, minus the 4 of the hole, minus the 1 cell (col 2, row 7) the second polygon covers.
    expect(inFirst).toBe(36 - 4 - 1);
    expect(z[7 * 10 + 2]).toBe(2);
    expect(z[5 * 10 + 5]).toBe(0); // inside the hole
    expect(cellsInsideRings(spec, square).length).toBe(36);
  });
});

describe('thermal grids equal the single-column engine cell by cell', () => {
  const q = heatFlowGrid(23, 17, (c, r) => 35 + 3.1 * c + 2.3 * r + ((c * r) % 7));
  q.values[5] = NaN; // no data stays no data
  q.values[40] = 20; // below the model's total heat production (≈ 27 mW/m²): inconsistent
  const base = compileModel(nominalModel(demo.model), { maxDepthKm: 60 });
  const region = applyLayerOverride(
    demo.model,
    overrideFromProperties({ layers: [{ name: 'basin fill', bottomKm: 4, conductivityWmK: 1.8, heatProductionUWm3: 1.2, densityKgM3: 2300 }] }, 'basin')!,
  );
  const cmRegion = compileModel(nominalModel(region), { maxDepthKm: 60 });
  const zones = rasterizeZones(q, [
    [
      [
        [11.0, 49.0],
        [12.0, 49.0],
        [12.0, 48.6],
        [11.0, 48.6],
      ],
    ],
  ]);
  const models = [base, cmRegion];
  const spec = { heatFlow: q, models, zones, isothermsC: [150, 300, 500], depthsKm: [3, 5, 10], faciesDepthKm: 12, maxDepthKm: 60 };
  const out = computeThermalGrids(spec);

  it("matches the engine's limited column (isotherms, temperatures, melt onset, wet solidus), basal heat flow and the facies classifier", () => {
    let zoneCells = 0,
      checked = 0,
      melting = 0;
    for (let i = 0; i < q.values.length; i += 3) {
      const q0 = q.values[i];
      const cm: CompiledModel = models[zones[i]];
      if (zones[i] === 1) zoneCells++;
      if (!Number.isFinite(q0)) {
        expect(out.isothermDepthKm[0][i]).toBeNaN();
        expect(out.inconsistent[i]).toBeNaN();
        continue;
      }
      const st = solveModelColumn(cm, { heatFlowMWm2: q0 });
      const lim = columnLimits(cm, st, 60);
      spec.isothermsC.forEach((T, k) => {
        const d = limitedIsothermDepth(cm, st, lim, T, 60);
        if (Number.isNaN(d)) expect(out.isothermDepthKm[k][i]).toBeNaN();
        else expect(out.isothermDepthKm[k][i]).toBeCloseTo(d, 4);
      });
      spec.depthsKm.forEach((z, k) => {
        const t = limitedTemperature(cm, st, lim, z);
        if (Number.isNaN(t)) expect(out.temperatureC[k][i]).toBeNaN();
        else expect(out.temperatureC[k][i]).toBeCloseTo(t, 3);
      });
      expect(out.baseHeatFlowMWm2[i]).toBeCloseTo(basalHeatFlow(cm, q0), 3);
      if (Number.isNaN(lim.wetSolidusKm)) expect(out.solidusDepthKm![i]).toBeNaN();
      else expect(out.solidusDepthKm![i]).toBeCloseTo(lim.wetSolidusKm, 5);
      if (Number.isNaN(lim.meltOnsetKm)) expect(out.meltOnsetKm![i]).toBeNaN();
      else {
        melting++;
        expect(out.meltOnsetKm![i]).toBeCloseTo(lim.meltOnsetKm, 5);
        expect(lim.wetSolidusKm).toBeLessThanOrEqual(lim.meltOnsetKm); // the water-saturated curve is met first
      }
      const t12 = limitedTemperature(cm, st, lim, 12);
      if (Number.isNaN(t12)) expect(out.facies![i]).toBeNaN();
      else expect(faciesNameOfCode(out.facies![i])).toBe(classifyFacies(t12, lithostaticPressureMPa(cm, 12) / 100).facies);
      expect(out.inconsistent[i]).toBe(st.status & 7); // contradictions only: melt onset is the melt-onset grid's
      expect(Number.isFinite(out.meltOnsetKm![i])).toBe(lim.endReason === 'melt-onset');
      checked++;
    }
    expect(checked).toBeGreaterThan(100);
    expect(melting).toBeGreaterThan(0);
    expect(zoneCells).toBeGreaterThan(5);
    expect(out.solidusDepthKm!.some((v) => Number.isFinite(v))).toBe(true);
    expect(out.facies!.some((v) => v === FACIES_CODES.greenschist || v === FACIES_CODES.amphibolite)).toBe(true);
  });

  it('flags the cell whose heat flow is exhausted inside the stack and counts it', () => {
    expect(out.inconsistent[40]).toBe(1);
    expect(out.baseHeatFlowMWm2[40]).toBeLessThan(0);
    expect(out.isothermDepthKm[2][40]).toBeNaN(); // 500 °C lies below the depth where the heat flow runs out
    const c = inconsistencyCounts(out.inconsistent, out.meltOnsetKm);
    expect(c.heatFlowExhausted).toBe(1);
    expect(c.inconsistent).toBe(1); // melt onset is not a contradiction: counted apart
    expect(c.meltOnset).toBe(Array.from(out.meltOnsetKm!).filter(Number.isFinite).length);
    expect(c.noData).toBe(1);
  });

  it('gives the same bytes for any row tiling', () => {
    const plan = planThermalGrids(spec);
    const tiled = allocateThermalGridBuffers(spec);
    for (let r = 0; r < q.height; r += 4) computeThermalGridRows(plan, r, Math.min(q.height, r + 4), tiled);
    for (let k = 0; k < 3; k++) expect(Buffer.from(tiled.isothermDepthKm[k].buffer).equals(Buffer.from(out.isothermDepthKm[k].buffer))).toBe(true);
    expect(Buffer.from(tiled.solidusDepthKm!.buffer).equals(Buffer.from(out.solidusDepthKm!.buffer))).toBe(true);
  });

  it('reproduces the Turcotte & Schubert worked case in a grid cell', () => {
    // Turcotte & Schubert (2002) §4-8, T0 = 10 °C, q0 = 60 mW/m², A0 = 2.5 µW/m³, hr = 10 km, k = 2.5 W/m/K:
    // depth to 300 °C = 15.1426 km, T(10 km) = 213.212 °C (docs/sources.md#geotherm-exponential [derived]).
    const ts = compileModel(
      { surfaceTemperatureC: 10, layers: [{ bottomKm: 60, conductivityWmK: 2.5, heatProductionUWm3: 2.5, heatProductionDecayKm: 10, densityKgM3: 2700 }] },
      { maxDepthKm: 60 },
    );
    const g = heatFlowGrid(2, 1, () => 60);
    const o = computeThermalGrids({ heatFlow: g, models: [ts], isothermsC: [300], depthsKm: [10], maxDepthKm: 60, solidus: false });
    expect(o.isothermDepthKm[0][1]).toBeCloseTo(15.1426, 3);
    expect(o.temperatureC[0][0]).toBeCloseTo(213.212, 2);
  });
});
