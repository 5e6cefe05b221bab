import { describe, it, expect } from 'vitest';
import { prng } from '../helpers/prng.ts';
import { computeIsogradsKm, buildTrace, tracePieces, faultReport, IndicatorField, type SampleGrade } from '../../shared/structure/index.ts';
import { gaussianHalfWidthKm, openBeyondSupport, separationInterval, OPEN_BEYOND_SUPPORT } from '../../shared/structure/fault-report.ts';

// Constructed domes cut by faults, in local km. A dome's surface peak temperature falls 5 °C/km from its centre and
// rises 25 °C/km with depth, so each isograd surface is a cone dipping outwards at atan(5/25) = 11.31°. Zones open at
// 420, 500, 560, 620 and 670 °C (biotite … sillimanite; the demo's values, invented).
const ZONE_IN_C = [420, 500, 560, 620, 670];
const rankOf = (tC: number) => ZONE_IN_C.filter((t) => tC >= t).length;
const FALL = 5,
  GRADIENT = 25,
  DEG = Math.PI / 180;

function lattice(half: number, spacing: number, tempAt: (x: number, y: number) => number, skip: (x: number, y: number) => boolean) {
  const rnd = prng(11);
  const xs: number[] = [],
    ys: number[] = [],
    g: SampleGrade[] = [];
  for (let x = -half; x <= half; x += spacing)
    for (let y = -half; y <= half; y += spacing) {
      const px = x + 0.3 * spacing * (rnd() - 0.5),
        py = y + 0.3 * spacing * (rnd() - 0.5);
      if (skip(px, py)) continue;
      const r = rankOf(tempAt(px, py));
      xs.push(px);
      ys.push(py);
      g.push({ id: `s${g.length}`, lo: r, hi: r, source: 'zone', zone: null, series: 'barrovian', label: null });
    }
  return { x: Float64Array.from(xs), y: Float64Array.from(ys), g };
}

describe('constructed dome cut by a normal fault with known throw and dips', () => {
  // Fault trace x = 8 km drawn south → north (east is its right side), dipping 60° east: the hanging wall is east.
  // Throw 1.5 km, pure dip slip d = 1.5 / sin 60° = 1.732 km (right triangle in the vertical plane of the dip). The
  // hanging-wall rock now at (x, y) sat at (x − d·cos 60°, y), 1.5 km higher, before the slip.
  const dipDeg = 60,
    throwKm = 1.5,
    dKm = throwKm / Math.sin(dipDeg * DEG);
  const temp = (x: number, y: number) =>
    x < 8 ? 700 - FALL * Math.hypot(x, y) : 700 - FALL * Math.hypot(x - dKm * Math.cos(dipDeg * DEG), y) - GRADIENT * throwKm;
  const d = lattice(60, 2, temp, (x) => Math.abs(x - 8) < 0.3);
  const trace = buildTrace('N1', [
    [
      [8, -60],
      [8, 60],
    ],
  ]).trace;
  const r = computeIsogradsKm(d.x, d.y, d.g, tracePieces([trace]), { cellKm: 0.5 });
  const isogradDipDeg = Math.atan(FALL / GRADIENT) / DEG;
  const rep = faultReport({ trace, kind: 'normal', dipDeg, dipDirectionDeg: 90 }, r.field, {
    supportKm: r.supportKm,
    isogradDipDeg,
    sampleIds: d.g.map((q) => q.id),
  });

  it('the dip-slip range of each isograd end covers the constructed 1.73 km, with normal sense', () => {
    expect(rep.separations.length).toBeGreaterThanOrEqual(6);
    for (const s of rep.separations) {
      expect(s.slipSense, `${s.isograd} ${s.end}`).toBe('normal');
      expect(s.dipSlipKm, `${s.isograd} ${s.end}`).toBeDefined();
      expect(dKm, `${s.isograd} ${s.end}`).toBeGreaterThanOrEqual(s.dipSlipKm!.low);
      // Samples every 2 km on both sides: no bound lies beyond the sampled support.
      expect(s.dipSlipKm!.high, `${s.isograd} ${s.end}`).not.toBeNull();
      expect(dKm, `${s.isograd} ${s.end}`).toBeLessThanOrEqual(s.dipSlipKm!.high!);
      expect(['N', 'S']).toContain(s.end);
      expect(s.displacedTowardHigherGrade).toBe('E side (hanging wall)');
    }
    expect(rep.missingZones, JSON.stringify(rep.missingZones)).toEqual([]);
    expect(rep.repeatedZones).toEqual([]);
    expect(rep.offsetOnly).toBe(true);
  });

  it('the separations themselves bracket the constructed ones (chord geometry of the offset cones)', () => {
    // Footwall meeting of isograd T: y² = R² − 8², R = (700 − T)/5; hanging wall: y² = R'² − (8 − 0.866)², R' = (662.5 − T)/5.
    for (const s of rep.separations) {
      const T = ZONE_IN_C[['biotite-in', 'garnet-in', 'staurolite-in', 'kyanite-in', 'sillimanite-in'].indexOf(s.isograd)];
      const R = (700 - T) / FALL,
        R2 = (700 - GRADIENT * throwKm - T) / FALL,
        x2 = 8 - dKm * Math.cos(dipDeg * DEG);
      const truth = Math.sqrt(R * R - 64) - Math.sqrt(R2 * R2 - x2 * x2);
      expect(truth).toBeGreaterThanOrEqual(s.separationKm.low);
      expect(s.separationKm.high).not.toBeNull();
      expect(truth).toBeLessThanOrEqual(s.separationKm.high!);
    }
  });
});

describe('a mislabelled sample beside the trace: an excursion of the profile, not a meeting', () => {
  // The normal-fault dome above (trace x = 8 km, S → N; footwall to the west, on the left). Kyanite-in (620 °C) meets
  // the footwall side at y = ±√(16² − 8²) = ±13.86 km (R = (700 − 620)/5 = 16 km), 46.14 and 73.86 km along the trace.
  // One sample added 0.8 km west of the trace at y = 21 km (r = 22.3 km: 588 °C, staurolite zone) recorded as kyanite.
  const dipDeg = 60,
    dKm = 1.5 / Math.sin(dipDeg * DEG);
  const temp = (x: number, y: number) =>
    x < 8 ? 700 - FALL * Math.hypot(x, y) : 700 - FALL * Math.hypot(x - dKm * Math.cos(dipDeg * DEG), y) - GRADIENT * 1.5;
  const d = lattice(60, 2, temp, (x) => Math.abs(x - 8) < 0.3);
  const trace = buildTrace('N1', [
    [
      [8, -60],
      [8, 60],
    ],
  ]).trace;
  const withSamples = (extra: [number, number][]) => {
    const x = Float64Array.from([...d.x, ...extra.map((p) => p[0])]),
      y = Float64Array.from([...d.y, ...extra.map((p) => p[1])]);
    const lo = Int8Array.from([...d.g.map((q) => q.lo), ...extra.map(() => 4)]);
    const field = new IndicatorField(x, y, lo, lo, { faults: tracePieces([trace]) });
    const ids = [...d.g.map((q) => q.id), ...extra.map((_, i) => `bad${i}`)];
    return faultReport({ trace, kind: 'normal', dipDeg, dipDirectionDeg: 90 }, field, { supportKm: 5, sampleIds: ids });
  };
  const kyaniteLeft = (rep: ReturnType<typeof faultReport>) => rep.meetings.filter((m) => m.isograd === 'kyanite-in' && m.side === 'left');

  it('one contradicted sample: its excursion is dropped and named; the meetings are those of the clean samples', () => {
    expect(rankOf(temp(7.2, 21))).toBe(3); // staurolite where the sample says kyanite
    expect(kyaniteLeft(withSamples([]))).toHaveLength(2);
    const rep = withSamples([[7.2, 21]]);
    expect(rep.droppedExcursions.map((e) => [e.isograd, e.side, e.sampleIds])).toEqual([['kyanite-in', 'left', ['bad0']]]);
    expect(rep.droppedExcursions[0].fromKm).toBeLessThan(81);
    expect(rep.droppedExcursions[0].toKm).toBeGreaterThan(81);
    expect(rep.warnings.join()).toMatch(/kyanite-in on the W side \(footwall\).*bad0.*not counted as a meeting/);
    // Two meetings left, at the constructed 46.14 and 73.86 km within 2.5 km (the lattice's spacing is 2 km; the
    // sample still pulls the local fit of the northern one by under a kilometre).
    const got = kyaniteLeft(rep);
    expect(got).toHaveLength(2);
    expect(Math.abs(got[0].alongKm - 46.14)).toBeLessThan(2.5);
    expect(Math.abs(got[1].alongKm - 73.86)).toBeLessThan(2.5);
  });

  it('three neighbouring samples agreeing with one another are a tongue the report keeps', () => {
    const rep = withSamples([
      [7.2, 21],
      [7.0, 22],
      [7.4, 23],
    ]);
    expect(rep.droppedExcursions).toEqual([]);
    expect(kyaniteLeft(rep).length).toBeGreaterThan(2);
  });
});

describe('the same normal fault with the hanging wall sampled only north of y = −30 km', () => {
  // Garnet-in meets the hanging wall at y = −√(32.5² − 7.134²) = −31.71 km (R' = (662.5 − 500)/5; x' = 8 − d·cos 60°),
  // south of its last sample there, and the footwall at y = −√(40² − 8²) = −39.19 km: the true S-end separation is
  // 7.48 km. The hanging wall's profile south of y = −30 follows no sample below garnet-in: the band's southern bound is
  // beyond the sampled support, so the separation's upper bound is reported open, not as a number.
  const dipDeg = 60,
    throwKm = 1.5,
    dKm = throwKm / Math.sin(dipDeg * DEG);
  const temp = (x: number, y: number) =>
    x < 8 ? 700 - FALL * Math.hypot(x, y) : 700 - FALL * Math.hypot(x - dKm * Math.cos(dipDeg * DEG), y) - GRADIENT * throwKm;
  const d = lattice(60, 2, temp, (x, y) => Math.abs(x - 8) < 0.3 || (x > 8 && y < -30));
  const trace = buildTrace('N1', [
    [
      [8, -60],
      [8, 60],
    ],
  ]).trace;
  const r = computeIsogradsKm(d.x, d.y, d.g, tracePieces([trace]), { cellKm: 0.5 });
  const rep = faultReport({ trace, kind: 'normal', dipDeg, dipDirectionDeg: 90 }, r.field, {
    supportKm: r.supportKm,
    isogradDipDeg: Math.atan(FALL / GRADIENT) / DEG,
  });

  it('garnet-in at the S end: upper bound open beyond sampled support (dip slip too), the truth above its lower bound', () => {
    const gS = rep.separations.find((s) => s.isograd === 'garnet-in' && s.end === 'S');
    expect(gS).toBeDefined();
    expect(gS!.separationKm.high).toBeNull();
    expect(gS!.separationKm.openReason).toBe(OPEN_BEYOND_SUPPORT);
    expect(gS!.dipSlipKm?.high).toBeNull();
    expect(gS!.dipSlipKm?.openReason).toBe(OPEN_BEYOND_SUPPORT);
    const truth = Math.sqrt(40 ** 2 - 64) - Math.sqrt(32.5 ** 2 - (8 - dKm * Math.cos(dipDeg * DEG)) ** 2);
    expect(truth).toBeCloseTo(7.48, 2);
    expect(truth).toBeGreaterThanOrEqual(gS!.separationKm.low);
  });

  it('the ends the samples reach keep numeric ranges that bracket the truth', () => {
    const closed = rep.separations.filter((s) => s.end === 'N');
    expect(closed.length).toBeGreaterThanOrEqual(3);
    for (const s of closed) {
      const T = ZONE_IN_C[['biotite-in', 'garnet-in', 'staurolite-in', 'kyanite-in', 'sillimanite-in'].indexOf(s.isograd)];
      const R = (700 - T) / FALL,
        R2 = (700 - GRADIENT * throwKm - T) / FALL,
        x2 = 8 - dKm * Math.cos(dipDeg * DEG);
      const truth = Math.sqrt(R * R - 64) - Math.sqrt(R2 * R2 - x2 * x2);
      expect(s.separationKm.high, s.isograd).not.toBeNull();
      expect(truth, s.isograd).toBeGreaterThanOrEqual(s.separationKm.low);
      expect(truth, s.isograd).toBeLessThanOrEqual(s.separationKm.high!);
    }
  });
});

describe('a band bound beyond the sampled support is open', () => {
  // Isograd j = 2 (garnet-in); D = 10 km. Grade rising along the trace (sense +1): the band's low end is constrained by
  // samples below garnet (rank ≤ 1), its high end by samples at garnet or above; a straddling sample (1–3) decides nothing.
  const pool = [
    { s: 20, lo: 1, hi: 1 },
    { s: 40, lo: 3, hi: 3 },
    { s: 0, lo: 1, hi: 3 },
    { s: 80, lo: 1, hi: 3 },
  ];
  it('a bound within D beyond the last constraining sample stays; one farther is open (−∞ / +∞)', () => {
    expect(openBeyondSupport([10, 50], pool, 2, 1, 10)).toEqual([10, 50]);
    expect(openBeyondSupport([9.9, 50.1], pool, 2, 1, 10)).toEqual([-Infinity, Infinity]);
    // Sense −1 (grade falling along the trace): the low end needs samples at garnet or above, the high end below it.
    const mirrored = [
      { s: 20, lo: 3, hi: 3 },
      { s: 40, lo: 1, hi: 1 },
    ];
    expect(openBeyondSupport([10, 50], mirrored, 2, -1, 10)).toEqual([10, 50]);
    expect(openBeyondSupport([9.9, 50.1], mirrored, 2, -1, 10)).toEqual([-Infinity, Infinity]);
    // A band between the samples is closed under the sense they show; under the other sense no sample lies on the
    // right side of either end, and samples straddling the isograd decide nothing.
    expect(openBeyondSupport([25, 35], pool, 2, 1, 10)).toEqual([25, 35]);
    expect(openBeyondSupport([25, 35], pool, 2, -1, 10)).toEqual([-Infinity, Infinity]);
    expect(openBeyondSupport([25, 35], pool.slice(2), 2, 1, 10)).toEqual([-Infinity, Infinity]);
  });
  it('an open side band makes the separation interval open above and keeps its lower bound finite', () => {
    // a at 10 with an open lower bound, b at 4 with a half-width 1.2816 × 1.5 = 1.9224 km each way: d = a − b = 6
    // extends without bound below (|d| then runs from 0) and to infinity in |d|.
    const [lo, hi] = separationInterval(
      { alongKm: 10, profileAlongKm: 10, bandAlongKm: [-Infinity, 12] },
      { alongKm: 4, profileAlongKm: 4, bandAlongKm: [4 - 1.9224, 4 + 1.9224] },
    );
    expect(lo).toBe(0);
    expect(hi).toBe(Infinity);
    // a open above only (1.5 km below it): d = 6 extends above without bound and below by √(1.5² + 1.9224²) = 2.438 km,
    // so |d| runs from 3.562 km with no upper bound.
    const [lo2, hi2] = separationInterval(
      { alongKm: 10, profileAlongKm: 10, bandAlongKm: [8.5, Infinity] },
      { alongKm: 4, profileAlongKm: 4, bandAlongKm: [4 - 1.9224, 4 + 1.9224] },
    );
    expect(lo2).toBeCloseTo(6 - Math.hypot(1.5, 1.9224), 9);
    expect(hi2).toBe(Infinity);
  });
});

describe('constructed dome cut by a thrust that repeats zones', () => {
  // Thrust trace x = −30 km drawn north → south (so west is its right side... drawn south → north: west is left),
  // dipping 30° west: the western sheet is carried from 12 km further in, so walking east the grade rises, drops at
  // the trace and rises again: garnet and staurolite occur on both sides.
  const temp = (x: number, y: number) => (x < -30 ? 700 - FALL * (Math.hypot(x, y) - 12) : 700 - FALL * Math.hypot(x, y));
  const d = lattice(60, 2, temp, (x) => Math.abs(x + 30) < 0.3);
  const trace = buildTrace('T1', [
    [
      [-30, -40],
      [-30, 40],
    ],
  ]).trace;
  const r = computeIsogradsKm(d.x, d.y, d.g, tracePieces([trace]), { cellKm: 0.5 });

  it('reports the zones as repeated (with their samples), none missing', () => {
    const rep = faultReport({ trace, kind: 'thrust', dipDeg: 30, dipDirectionDeg: 270 }, r.field, { supportKm: r.supportKm, sampleIds: d.g.map((q) => q.id) });
    expect(rep.repeatedZones.map((z) => z.zone)).toEqual(expect.arrayContaining(['garnet', 'staurolite']));
    for (const z of rep.repeatedZones) expect(z.sampleIds.length).toBeGreaterThanOrEqual(2);
    expect(rep.missingZones).toEqual([]);
    expect(rep.warnings.join()).not.toMatch(/against the fault's kind/);
  });

  it('the same repetition on a fault recorded as normal is flagged as a conflict with its kind', () => {
    const rep = faultReport({ trace, kind: 'normal' }, r.field, { supportKm: r.supportKm });
    expect(rep.repeatedZones.length).toBeGreaterThan(0);
    expect(rep.warnings.join()).toMatch(/repeated across a fault recorded as normal/);
  });
});

describe('10–90 % interval arithmetic of meeting points and separations', () => {
  // z₀.₉ = 1.2816, the standard normal 0.9 quantile (Abramowitz & Stegun 1964, table 26.2); φ(0) = 1/√(2π).
  const Z90 = 1.2816,
    PHI0 = 1 / Math.sqrt(2 * Math.PI);
  // A meeting at `at` whose 0.5 crossing lies at `profile`, with a Gaussian position error of σ km either way.
  const meeting = (at: number, profile: number, sigmaKm: number) => ({
    alongKm: at,
    profileAlongKm: profile,
    bandAlongKm: [Math.min(at, profile) - Z90 * sigmaKm, Math.max(at, profile) + Z90 * sigmaKm] as [number, number],
  });

  it('a probit profile of slope k at its 0.5 crossing has σ = φ(0)/k and 10–90 % half-width z₀.₉·σ (0.5113/k)', () => {
    // Slope 0.1 /km: σ = 3.9894 km, half-width 1.2816 × 3.9894 = 5.1128 km.
    expect(gaussianHalfWidthKm(0.1)).toBeCloseTo((Z90 * PHI0) / 0.1, 3);
    expect(gaussianHalfWidthKm(0.1)).toBeCloseTo(5.1128, 3);
    expect(gaussianHalfWidthKm(0.4)).toBeCloseTo(1.2782, 3);
    // The old straight line through the median (0.4/slope) gave 4 km: only Φ(4/3.9894) − Φ(−4/3.9894) ≈ 68 % coverage.
    expect(gaussianHalfWidthKm(0)).toBe(Infinity);
  });

  it('independent Gaussian errors: the difference extends by z₀.₉·√(σa² + σb²) each way', () => {
    // σa = 2, σb = 1.5: √(4 + 2.25) = 2.5, half-width 1.2816 × 2.5 = 3.204 km about d = 10 − 4 = 6 km.
    const [lo, hi] = separationInterval(meeting(10, 10, 2), meeting(4, 4, 1.5));
    expect(lo).toBeCloseTo(6 - 3.204, 6);
    expect(hi).toBeCloseTo(6 + 3.204, 6);
  });

  it('the offset between the fitted point and the profile crossing is added linearly, not in quadrature', () => {
    // a fitted at 11, its profile crossing at 10 (1 km below): d = 7, the low end 7 − 3.204 − 1 = 2.796, the high end
    // 7 + 3.204 = 10.204 (the crossing lies below a, so it moves only the lower end).
    const [lo, hi] = separationInterval(meeting(11, 10, 2), meeting(4, 4, 1.5));
    expect(lo).toBeCloseTo(2.796, 6);
    expect(hi).toBeCloseTo(10.204, 6);
  });

  it('an interval of the difference spanning zero gives a separation range from 0', () => {
    // d = 1, σa = σb = 2: half-width 1.2816 × 2√2 = 3.6249 km, so the difference runs −2.6249 … 4.6249.
    const [lo, hi] = separationInterval(meeting(5, 5, 2), meeting(4, 4, 2));
    expect(lo).toBe(0);
    expect(hi).toBeCloseTo(1 + Z90 * 2 * Math.SQRT2, 6);
    expect(hi).toBeCloseTo(4.6249, 3);
  });
});
