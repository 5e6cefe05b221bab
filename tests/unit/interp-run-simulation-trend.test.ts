import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { pointsFromGeoJson } from '../../shared/schema/interp.ts';
import { interpolateGrid } from '../../shared/interp/interpolate.ts';
import { WGS84_DEF } from '../../shared/interp/projection.ts';
import { TREND_KINDS } from '../../shared/interp/drift.ts';
import { runSimulationOptions, simulateRunHeatFlow } from '../../server/runs/heat-flow-simulation.ts';

/**
 * With `trend: 'auto'`, a run's heat-flow realizations carry the drift its kriged heat-flow map chose by
 * leave-one-out cross-validation (docs/sources.md#universal-kriging): one drift for the map and its realizations.
 * Invented demo sites (fixtures/demo/sites.geojson).
 */
const { points } = pointsFromGeoJson(JSON.parse(readFileSync(new URL('../../fixtures/demo/sites.geojson', import.meta.url), 'utf8')), 'heatFlowMWm2');
const iopt = { method: 'kriging', trend: 'auto' as const };

describe("a run's simulation follows the kriging's chosen drift", () => {
  it("the simulation's reported trend equals the kriging's choice, whichever drift that is", () => {
    const kr = interpolateGrid(points, { method: 'kriging', trend: 'auto', grid: { cellKm: 25 }, sd: false, units: 'mW/m²' });
    const chosen = kr.variogram!.trend!.kind;
    expect(kr.variogram!.trend!.selectedBy).toBe('cross-validation');
    const sim = simulateRunHeatFlow(points, runSimulationOptions(iopt, chosen), kr.grid, WGS84_DEF, 2, 3);
    expect(sim.report.trend).toBe(chosen);
    // Each drift the kriging could choose is the one the simulation carries (a second, separate choice would give
    // one kind for all three).
    for (const kind of TREND_KINDS) {
      const s = simulateRunHeatFlow(points, runSimulationOptions(iopt, kind), kr.grid, WGS84_DEF, 2, 3);
      expect(s.report.trend).toBe(kind);
      expect(s.source).toContain(kind === 'none' ? 'ordinary' : `universal (${kind} drift)`);
    }
    // Without a chosen drift (e.g. an IDW map), auto is left to the simulation.
    expect(runSimulationOptions(iopt).trend).toBe('auto');
  }, 120_000);
});
