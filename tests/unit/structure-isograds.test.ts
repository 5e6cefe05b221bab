import { describe, it, expect } from 'vitest';
import { createStream } from '../../shared/random/prng.ts';
import { IdwPredictor } from '../../shared/interp/idw.ts';
import { FaultBarrier } from '../../shared/interp/barriers.ts';
import {
  IndicatorField,
  computeIsogradsKm,
  traceIsolines,
  buildTrace,
  tracePieces,
  faultReport,
  locateOnTrace,
  type SampleGrade,
} from '../../shared/structure/index.ts';

const grade = (id: string, r: number): SampleGrade => ({ id, lo: r, hi: r, source: 'zone', zone: null, series: 'barrovian', label: null });

/** Samples on a jittered square lattice (spacing km, seeded), ranks from rankAt(x, y). */
function lattice(x0: number, x1: number, y0: number, y1: number, spacing: number, rankAt: (x: number, y: number) => number, skip?: (x: number) => boolean) {
  const rng = createStream(7);
  const xs: number[] = [],
    ys: number[] = [],
    gs: SampleGrade[] = [];
  for (let x = x0; x <= x1; x += spacing)
    for (let y = y0; y <= y1; y += spacing) {
      const px = x + 0.3 * spacing * (rng.uniform() - 0.5),
        py = y + 0.3 * spacing * (rng.uniform() - 0.5);
      if (skip?.(px)) continue;
      xs.push(px);
      ys.push(py);
      gs.push(grade(`s${gs.length}`, rankAt(px, py)));
    }
  return { x: Float64Array.from(xs), y: Float64Array.from(ys), g: gs };
}

/** Signed area (km²) of a closed ring; < 0 clockwise (x east, y north). */
function signedArea(c: Float64Array): number {
  let a = 0;
  for (let i = 0; i + 3 < c.length; i += 2) a += c[i] * c[i + 3] - c[i + 2] * c[i + 1];
  return a / 2;
}

describe('marching-squares isolines', () => {
  it('a single high cell gives one clockwise ring (high side on the right) through the edge midpoints', () => {
    // 3 × 3 grid, centre 1, others 0, level 0.5: crossings halfway along each of the four edges at the centre.
    const v = new Float64Array([0, 0, 0, 0, 1, 0, 0, 0, 0]);
    const lines = traceIsolines(v, { x0: 0, y0: 0, cellKm: 1, width: 3, height: 3 }, 0.5);
    expect(lines.length).toBe(1);
    expect(lines[0].closed).toBe(true);
    expect(lines[0].coords.length).toBe(10); // four vertices + the first repeated
    // Diamond with half-diagonal 0.5 about (1, 1): area 0.5, clockwise because the high inside is on the right.
    expect(signedArea(lines[0].coords)).toBeCloseTo(-0.5, 12);
  });

  it('a NaN corner ends the line; a blocked edge suppresses its crossing', () => {
    // Values rise eastwards: the 0.5 line is the vertical x = 1.5, running north (high on the right).
    const g = { x0: 0, y0: 0, cellKm: 1, width: 4, height: 4 };
    const v = new Float64Array(16);
    for (let r = 0; r < 4; r++) for (let c = 0; c < 4; c++) v[r * 4 + c] = c >= 2 ? 1 : 0;
    const full = traceIsolines(v, g, 0.5);
    expect(full.length).toBe(1);
    const c = full[0].coords;
    expect(c[1]).toBe(0);
    expect(c[c.length - 1]).toBe(3); // runs from y = 0 north to y = 3
    for (let i = 0; i < c.length; i += 2) expect(c[i]).toBeCloseTo(1.5, 12);
    const withNaN = Float64Array.from(v);
    withNaN[2 * 4 + 1] = NaN; // corner (1, 2)
    const parts = traceIsolines(withNaN, g, 0.5);
    expect(Math.max(...parts.map((l) => l.coords[l.coords.length - 1]))).toBeLessThan(3);
    const blocked = new Uint8Array(32);
    blocked[2 * (1 * 4 + 1)] = 1; // edge (1, 1)–(2, 1)
    const cut = traceIsolines(v, g, 0.5, blocked);
    // Both segments touching the crossing at y = 1 go: what is left runs from y = 2 to y = 3.
    expect(cut.length).toBe(1);
    expect(cut[0].coords[1]).toBe(2);
  });
});

describe('indicator surfaces', () => {
  it("equal the interpolation engine's IDW of each indicator, fault barriers included", () => {
    const rng = createStream(11);
    const n = 150;
    const x = new Float64Array(n),
      y = new Float64Array(n),
      lo = new Int8Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = 50 * rng.uniform();
      y[i] = 50 * rng.uniform();
      lo[i] = Math.floor(6 * rng.uniform());
    }
    const faults = new Float64Array([20, -5, 25, 30, 25, 30, 40, 55]);
    const field = new IndicatorField(x, y, lo, lo, { method: 'idw', neighbors: 10, faults });
    const out = new Float64Array(5);
    for (let j = 1; j <= 5; j++) {
      const z = Float64Array.from(lo, (r) => (r >= j ? 1 : 0));
      const ref = new IdwPredictor(x, y, z, { neighbors: 10, visibility: new FaultBarrier(faults, x, y) });
      for (let t = 0; t < 40; t++) {
        const qx = 50 * rng.uniform(),
          qy = 50 * rng.uniform();
        field.predict(qx, qy, out);
        expect(out[j - 1]).toBeCloseTo(ref.predict(qx, qy), 12);
      }
    }
  });

  it('the grid fast path (no barrier test far from faults) gives the same values as full barrier searches', () => {
    const rng = createStream(5);
    const n = 300;
    const x = new Float64Array(n),
      y = new Float64Array(n),
      lo = new Int8Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = 60 * rng.uniform();
      y[i] = 60 * rng.uniform();
      lo[i] = Math.min(5, Math.floor(x[i] / 10));
    }
    const field = new IndicatorField(x, y, lo, lo, { method: 'idw', faults: new Float64Array([30, 0, 31, 60]) });
    const g = { x0: 0, y0: 0, cellKm: 2, width: 31, height: 31 };
    const vals = new Float32Array(5 * 31 * 31),
      near = new Float32Array(31 * 31);
    field.grid(g, vals, near);
    expect(field.barrierSearches).toBeGreaterThan(0);
    expect(field.barrierSearches).toBeLessThan(31 * 31);
    const out = new Float64Array(5);
    for (let i = 0; i < 31 * 31; i += 7) {
      const c = i % 31,
        r = (i - c) / 31;
      field.predict(c * 2, r * 2, out);
      for (let j = 0; j < 5; j++) expect(vals[j * 961 + i]).toBeCloseTo(out[j], 6);
    }
  });
});

describe('isograds on constructed cases', () => {
  it('recovers a straight garnet-in isograd at x = 10 km within 1.5 km (half the 3-km sample spacing), high side on the right', () => {
    const d = lattice(-30, 30, -30, 30, 3, (px) => (px >= 10 ? 2 : 1));
    const r = computeIsogradsKm(d.x, d.y, d.g, null, { cellKm: 0.5 });
    const garnet = r.lines.filter((l) => l.isograd === 'garnet-in' && l.probability === 0.5);
    expect(garnet.length).toBe(1);
    const c = garnet[0].coords;
    let worst = 0;
    for (let i = 0; i < c.length; i += 2) worst = Math.max(worst, Math.abs(c[i] - 10));
    expect(worst).toBeLessThan(1.5);
    // Garnet (higher) is to the east, so with the high side on the right the line runs north.
    expect(c[c.length - 1]).toBeGreaterThan(c[1] + 40);
    expect(garnet[0].support.samplesNearMidpoint).toBeGreaterThan(3);
    // No biotite-in line: every sample is biotite or above.
    expect(r.lines.some((l) => l.isograd === 'biotite-in')).toBe(false);
    expect(r.loo.rank.length).toBe(d.g.length);
  });

  it('clips lines to where samples support them', () => {
    const d = lattice(-30, 30, -30, 30, 3, (px) => (px >= 10 ? 2 : 1));
    const r = computeIsogradsKm(d.x, d.y, d.g, null, { cellKm: 0.5, supportKm: 2 });
    for (const l of r.lines) for (let i = 0; i < l.coords.length; i += 2) expect(Math.abs(l.coords[i + 1])).toBeLessThan(30 + 2.5);
  });

  // Fault along x = 0 (trace drawn south → north, so west = left, east = right). West: garnet for y ≥ 0;
  // east: garnet for y ≥ 8 — the isograd is offset 8 km along the fault.
  const trace = buildTrace('T', [
    [
      [0, -40],
      [0.05, 0],
      [0, 40],
    ],
  ]).trace;
  const rankOffset = (px: number, py: number) => (py >= (px < 0 ? 0 : 8) ? 2 : 1);

  it('measures the along-trace separation of an offset isograd: 8 km within 1.5 km', () => {
    const d = lattice(-24, 24, -36, 36, 2, rankOffset, (px) => Math.abs(px) < 0.3);
    const r = computeIsogradsKm(d.x, d.y, d.g, tracePieces([trace]), { cellKm: 0.5 });
    const rep = faultReport({ trace, kind: 'normal', dipDirectionDeg: 90 }, r.field, { supportKm: r.supportKm, faultDistanceKm: 10 });
    const sep = rep.separations.filter((s) => s.isograd === 'garnet-in');
    expect(sep.length).toBe(1);
    expect(Math.abs(sep[0].separationKm.value - 8)).toBeLessThan(1.5);
    expect(sep[0].separationKm.low).toBeLessThanOrEqual(8);
    expect(sep[0].separationKm.high).toBeGreaterThanOrEqual(8);
    expect(sep[0].end).toBe('N'); // a single meeting named from the trace's middle: it lies north of it
    // The east side's isograd lies 8 km further north: seen across the fault the far block moved left (sinistral);
    // grade rises northwards, so the east side's isograd is displaced towards higher grade.
    expect(sep[0].sense).toBe('sinistral');
    expect(sep[0].displacedTowardHigherGrade).toBe('E side (hanging wall)');
    expect(Math.abs(sep[0].leftAlongKm - 40)).toBeLessThan(1.5); // trace length 80 km, y = 0 at 40 km along
    expect(rep.hangingWall).toBe('right');
    expect(rep.higherSide).toBe('left');
    expect(rep.higherWall).toBe('footwall');
    // Lines stop at the fault: no garnet-in vertex closer than ~one cell to it on the wrong side.
    for (const l of r.lines.filter((q) => q.isograd === 'garnet-in' && q.probability === 0.5)) {
      const xs = Array.from({ length: l.coords.length / 2 }, (_, i) => l.coords[2 * i]);
      expect(xs.every((v) => v < 0) || xs.every((v) => v > 0)).toBe(true);
    }
  });

  it('a zone missing across a fault: one side only below it, the other only above, on neither', () => {
    // Left (west): biotite south, garnet north; right (east): kyanite south, sillimanite north → staurolite is cut out.
    const d = lattice(
      -24,
      24,
      -30,
      30,
      2,
      (px, py) => (px < 0 ? (py >= 0 ? 2 : 1) : py >= 0 ? 5 : 4),
      (px) => Math.abs(px) < 0.3,
    );
    const r = computeIsogradsKm(d.x, d.y, d.g, tracePieces([trace]), { cellKm: 0.5 });
    const rep = faultReport({ trace }, r.field, { supportKm: r.supportKm, sampleIds: d.g.map((g) => g.id) });
    // South of y = 0 biotite faces kyanite (garnet and staurolite cut out), north garnet faces sillimanite
    // (staurolite and kyanite cut out).
    expect(rep.missingZones.map((z) => z.zone)).toEqual(['garnet', 'staurolite', 'kyanite']);
    for (const z of rep.missingZones) expect(z.sampleIds.length).toBeGreaterThan(2);
    // The trace runs north, so its left is west; the west side holds the lower zones (constructed above).
    for (const z of rep.missingZones) expect({ side: z.side, higherSide: z.higherSide }).toEqual({ side: 'W side', higherSide: 'E side' });
    expect(rep.repeatedZones).toEqual([]);
    expect(rep.offsetOnly).toBe(false);
    expect(rep.higherSide).toBe('right');
  });

  it('a top or bottom zone that does not reach one side is "not reached", not missing', () => {
    // Left: staurolite south, kyanite north; right: garnet south, staurolite north (the old "missing" case).
    const d = lattice(
      -24,
      24,
      -30,
      30,
      2,
      (px, py) => (px < 0 ? (py >= 0 ? 4 : 3) : py >= 0 ? 3 : 2),
      (px) => Math.abs(px) < 0.3,
    );
    const r = computeIsogradsKm(d.x, d.y, d.g, tracePieces([trace]), { cellKm: 0.5 });
    const rep = faultReport({ trace }, r.field, { supportKm: r.supportKm });
    expect(rep.missingZones).toEqual([]);
    expect(rep.notReached).toContainEqual({ isograd: 'kyanite-in', side: 'right', sideName: 'E side' });
    expect(rep.notReached).toContainEqual({ isograd: 'staurolite-in', side: 'left', sideName: 'W side' });
    expect(rep.gradeJump).toBe(1);
    expect(rep.higherSide).toBe('left');
  });

  it('locates points against a trace: along distance, side, beyond the ends', () => {
    const t = buildTrace('S', [
      [
        [0, 0],
        [10, 0],
      ],
    ]).trace;
    expect(locateOnTrace(t, 4, 2)).toEqual({ alongKm: 4, offsetKm: -2, beyondEnd: false }); // north of an eastward trace: left
    expect(locateOnTrace(t, 4, -3)).toEqual({ alongKm: 4, offsetKm: 3, beyondEnd: false });
    expect(locateOnTrace(t, 12, 0).beyondEnd).toBe(true);
  });
});
