// Sections along a line (shared/products/section.ts): where fault and isograd traces cross the line, decided by the
// exact orientation predicates (O'Rourke, Computational Geometry in C, 2nd ed., §1.5, as in the fault barriers),
// and the distance along the line measured on the WGS84 ellipsoid.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { computeSection, segmentCrossing, type LineFeature } from '../../shared/products/section.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';
import { DEMO_DIR } from '../../server/demo.ts';

const model = parseThermalModel(JSON.parse(readFileSync(`${DEMO_DIR}/model.json`, 'utf8')), 'demo model');
const fault = (id: string, ...lines: number[][][]): LineFeature => ({ id, properties: {}, lines });
const section = (line: [number, number][], faults: LineFeature[]) =>
  computeSection({ heatFlowAt: () => 70, model, line, maxDepthKm: 20, samples: 5, depthSamples: 3, isothermsC: [300], faults, isograds: [] }) as {
    faultCrossings: { id: string; distanceKm: number; lon: number; lat: number }[];
  };

describe('segmentCrossing', () => {
  it('finds the crossing of the diagonals of a square at its centre (analytic geometry)', () => {
    expect(segmentCrossing([0, 0], [2, 2], [0, 2], [2, 0])).toEqual({ t: 0.5, lon: 1, lat: 1 });
    // x = 3 meets the line y = x/4 from (0, 0) to (4, 1) at t = 3/4, y = 0.75.
    const c = segmentCrossing([0, 0], [4, 1], [3, -1], [3, 2])!;
    expect(c.t).toBeCloseTo(0.75, 15);
    expect(c.lat).toBeCloseTo(0.75, 15);
  });

  it('gives no crossing for parallel, collinear-overlapping and disjoint pieces', () => {
    expect(segmentCrossing([0, 0], [2, 0], [0, 1], [2, 1])).toBeNull();
    expect(segmentCrossing([0, 0], [2, 0], [1, 0], [3, 0])).toBeNull();
    expect(segmentCrossing([0, 0], [1, 1], [2, 0], [3, -1])).toBeNull();
  });
});

describe('computeSection crossings', () => {
  it('locates a fault crossing at its geodesic distance along the equator (WGS84 a = 6378137 m: 1° = 111.319 km)', () => {
    const s = section(
      [
        [0, 0],
        [2, 0],
      ],
      [
        fault('F', [
          [1, -0.5],
          [1, 0.5],
        ]),
      ],
    );
    expect(s.faultCrossings).toHaveLength(1);
    expect(s.faultCrossings[0].lon).toBeCloseTo(1, 12);
    // On the equator a geodesic shorter than (1 − f)·180° runs along it: s = a·Δλ (NIMA TR8350.2 for a).
    expect(s.faultCrossings[0].distanceKm).toBeCloseTo((6378.137 * Math.PI) / 180, 3);
  });

  it('counts a trace through a vertex of the line once, and a line through a vertex of the trace once', () => {
    const throughLineVertex = section(
      [
        [0, 0],
        [1, 0],
        [2, 0],
      ],
      [
        fault('F', [
          [1, -0.5],
          [1, 0.5],
        ]),
      ],
    );
    expect(throughLineVertex.faultCrossings.map((c) => c.lon)).toEqual([1]);
    const throughTraceVertex = section(
      [
        [0, 0],
        [2, 0],
      ],
      [
        fault('G', [
          [0.5, -0.5],
          [0.5, 0],
          [0.5, 0.5],
        ]),
      ],
    );
    expect(throughTraceVertex.faultCrossings.map((c) => c.lon)).toEqual([0.5]);
  });

  it('orders crossings by distance along the line and leaves out traces that stay on one side', () => {
    const s = section(
      [
        [0, 0],
        [2, 0],
      ],
      [
        fault('far', [
          [1.5, -1],
          [1.5, 1],
        ]),
        fault('near', [
          [0.25, 1],
          [0.25, -1],
        ]),
        fault('apart', [
          [0, 1],
          [2, 1],
        ]),
      ],
    );
    expect(s.faultCrossings.map((c) => c.id)).toEqual(['near', 'far']);
  });
});
