import { describe, it, expect, beforeAll } from 'vitest';
import { readFileSync } from 'node:fs';
import geodesic from 'geographiclib-geodesic';
import { parseFeatureCollection, type SampleCollection, type FaultCollection } from '../../shared/schema/features.ts';
import { isogradLayer, computeIsogradsKm, sampleGrades, buildTrace, tracePieces, faultReport, type IsogradLayer } from '../../shared/structure/index.ts';
import { DOME, FAULTS, ZONE_IN_C, kmFromLonLat, sideOfFault, truePeakTemperatureC } from '../../fixtures/field.ts';

// The demo region's truth (fixtures/truth.json, fixtures/field.ts: invented data). 402 samples over an 85-km dome:
// four radial traverses, scattered samples, a traverse along each side of the F1 fault and short traverses across F2; the tolerances below are
// what the method achieves there.
const G = geodesic.Geodesic.WGS84;
const truth = JSON.parse(readFileSync('fixtures/truth.json', 'utf8'));
let L: IsogradLayer;
let Lp: IsogradLayer;
beforeAll(() => {
  const s = parseFeatureCollection('samples', JSON.parse(readFileSync('fixtures/demo/samples.geojson', 'utf8'))).collection as SampleCollection;
  const f = parseFeatureCollection('faults', JSON.parse(readFileSync('fixtures/demo/faults.geojson', 'utf8'))).collection as FaultCollection;
  Lp = isogradLayer(s, f, { isogradDipDeg: truth.faults.find((q: { id: string }) => q.id === 'F1').builtInOffset.isogradDipDeg });
  L = Lp;
});

describe('demo region: isograd positions', () => {
  it('each isograd lies within a few km of the truth (median error per isograd)', () => {
    // Error of a vertex, km: |T_true − T_isograd| / (5 °C/km), the dome's radial fall of peak temperature. Away from
    // the faults this is the radial distance to the truth circle (fixtures/truth.json dome.isogradRadiiKm); it also
    // follows the faults' built-in shifts (F1 hanging wall 6 km inwards, the F2 sheet 12 km outwards).
    const limits: Record<string, number> = { 'biotite-in': 2.5, 'garnet-in': 2.5, 'staurolite-in': 2.5, 'kyanite-in': 1.5, 'sillimanite-in': 1.5 };
    for (const [name, limit] of Object.entries(limits)) {
      const rank = ['biotite-in', 'garnet-in', 'staurolite-in', 'kyanite-in', 'sillimanite-in'].indexOf(name) + 1;
      const e: number[] = [];
      for (const ft of L.lines.features.filter((q) => q.properties.isograd === name && q.properties.probability === 0.5)) {
        for (const [lon, lat] of ft.geometry.coordinates) {
          const [x, y] = kmFromLonLat(lon, lat);
          e.push(Math.abs(truePeakTemperatureC(x, y) - ZONE_IN_C[rank]) / DOME.fallCPerKm);
        }
      }
      e.sort((a, b) => a - b);
      expect(e.length).toBeGreaterThan(20);
      expect(e[e.length >> 1], name).toBeLessThan(limit);
    }
    // The sillimanite-in isograd away from the faults: its mean radius from the dome centre against truth (10 km).
    const r: number[] = [];
    for (const ft of L.lines.features.filter((q) => q.properties.isograd === 'sillimanite-in' && q.properties.probability === 0.5))
      for (const [lon, lat] of ft.geometry.coordinates) {
        const [x, y] = kmFromLonLat(lon, lat);
        r.push(Math.hypot(x - DOME.xKm, y - DOME.yKm));
      }
    const mean = r.reduce((a, b) => a + b, 0) / r.length;
    expect(Math.abs(mean - truth.dome.isogradRadiiKm['sillimanite-in'])).toBeLessThan(2.5);
  });

  it('lines carry isograd, probability (0.1, 0.5, 0.9), mineral, rank, high side, support; the export carries the caution', () => {
    expect(L.lines.caution).toMatch(/Screening estimates only/);
    for (const f of L.lines.features) {
      expect([0.1, 0.5, 0.9]).toContain(f.properties.probability);
      expect(f.properties.isograd).toMatch(/-in$/);
      expect(f.properties.highSide).toBe('right');
      expect(Number.isInteger(f.properties.rank)).toBe(true);
    }
    // Support at the midpoint, recounted here: demo samples within supportRadiusKm of the point halfway along the
    // line, by WGS84 geodesic distance (geographiclib, a general-purpose reference library). The line's vertices are
    // in lon/lat here and in the layer's local km plane there, so a sample within 2 % of the radius may count either
    // way: the reported count must lie between the counts at 0.98 and 1.02 of the radius.
    const samples = JSON.parse(readFileSync('fixtures/demo/samples.geojson', 'utf8')).features.map(
      (q: { geometry: { coordinates: number[] } }) => q.geometry.coordinates,
    );
    const dist = (a: number[], b: number[]) => G.Inverse(a[1], a[0], b[1], b[0]).s12! / 1000;
    let checked = 0,
      positive = 0;
    for (const f of L.lines.features.filter((q) => q.properties.probability === 0.5).slice(0, 12)) {
      const c = f.geometry.coordinates;
      const seg = c.slice(1).map((p, i) => dist(c[i], p));
      let half = seg.reduce((a, b) => a + b, 0) / 2,
        mid = c[0];
      for (let i = 0; i < seg.length; i++) {
        if (half <= seg[i] && seg[i] > 0) {
          const u = half / seg[i];
          mid = [c[i][0] + u * (c[i + 1][0] - c[i][0]), c[i][1] + u * (c[i + 1][1] - c[i][1])];
          break;
        }
        half -= seg[i];
      }
      const r = Number(f.properties.supportRadiusKm);
      const near = samples.map((p: number[]) => dist(p, mid));
      const lo = near.filter((d: number) => d <= 0.98 * r).length,
        hi = near.filter((d: number) => d <= 1.02 * r).length;
      expect(f.properties.samplesNearMidpoint).toBeGreaterThanOrEqual(lo);
      expect(f.properties.samplesNearMidpoint).toBeLessThanOrEqual(hi);
      checked++;
      if (lo > 0) positive++;
    }
    expect(checked).toBeGreaterThan(5);
    expect(positive).toBeGreaterThan(0);
    // High side check on a sillimanite-in line: a point 1 km to the right of a segment is nearer the dome centre.
    const line = L.lines.features
      .filter((q) => q.properties.isograd === 'sillimanite-in' && q.properties.probability === 0.5)
      .sort((a, b) => b.geometry.coordinates.length - a.geometry.coordinates.length)[0];
    const c = line.geometry.coordinates.map(([lon, lat]) => kmFromLonLat(lon, lat));
    let inwards = 0,
      total = 0;
    for (let i = 1; i < c.length; i++) {
      const dx = c[i][0] - c[i - 1][0],
        dy = c[i][1] - c[i - 1][1],
        len = Math.hypot(dx, dy);
      if (len === 0) continue;
      const mx = (c[i][0] + c[i - 1][0]) / 2 + dy / len,
        my = (c[i][1] + c[i - 1][1]) / 2 - dx / len;
      const r0 = Math.hypot((c[i][0] + c[i - 1][0]) / 2 - DOME.xKm, (c[i][1] + c[i - 1][1]) / 2 - DOME.yKm);
      if (Math.hypot(mx - DOME.xKm, my - DOME.yKm) < r0) inwards++;
      total++;
    }
    expect(inwards / total).toBeGreaterThan(0.9);
  });

  it('catches the deliberately mislabelled samples (at least 70 %) without flagging most others', () => {
    const ids = new Set(L.report.misfits.map((m) => m.id));
    const caught = (truth.dome.mislabelledSamples as string[]).filter((id) => ids.has(id));
    expect(caught.length).toBeGreaterThanOrEqual(Math.ceil(0.7 * truth.dome.mislabelledSamples.length)); // 8 of 10 at present
    expect(L.report.misfits.length).toBeLessThanOrEqual(35); // of 402 samples; the others sit next to an isograd or a fault
    for (const m of L.report.misfits) expect(m.isograds.length).toBeGreaterThan(0);
  });
});

const rangeText = (s: { isograd: string; end: string; separationKm: { value: number; low: number; high: number | null } }) =>
  `${s.isograd} ${s.end} ${s.separationKm.value.toFixed(1)} (${s.separationKm.low.toFixed(1)}–${s.separationKm.high === null ? 'open' : s.separationKm.high.toFixed(1)})`;

describe('demo region: faults', () => {
  const fault = (id: string) => L.report.faults.find((f) => f.id === id)!;
  it('F1 (normal): offset only, footwall higher, sillimanite-in not reaching the hanging wall, no zone missing', () => {
    // fixtures/truth.json F1.builtInOffset: isogradsNotReachingHangingWall ['sillimanite-in'], zonesMissing [].
    const f1 = fault('F1');
    expect(f1.hangingWall).toBe('right');
    expect(f1.sideNames.right).toBe('ESE side (hanging wall)');
    expect(f1.higherWall).toBe('footwall');
    expect(f1.missingZones).toEqual([]);
    expect(f1.repeatedZones).toEqual([]);
    expect(f1.offsetOnly).toBe(true);
    expect(f1.notReached).toContainEqual({ isograd: 'sillimanite-in', side: 'right', sideName: 'ESE side (hanging wall)' });
  });

  it('F1 separations: biotite-in to kyanite-in at both ends (SSW, NNE), the truth inside each closed range, above the open range lower bound', () => {
    // fixtures/truth.json: F1 moves every isograd 6 km inwards on its hanging wall, which meets the trace 6.03 (biotite)
    // to 6.43 km (kyanite) apart along it.
    const f1 = fault('F1');
    const truthSep = new Map(
      (truth.isogradSeparations as { fault: string; isograd: string; separationKm?: number[] }[])
        .filter((s) => s.fault === 'F1' && s.separationKm)
        .map((s) => [s.isograd, s.separationKm![0]]),
    );
    // A closed range counts when it contains the truth; an open range (no upper bound) says only that the separation is
    // at least its lower bound, so it is counted apart and checked on that bound alone.
    let closedInside = 0;
    let openLowBelow = 0;
    for (const s of f1.separations) {
      expect(truthSep.has(s.isograd), s.isograd).toBe(true);
      expect(['SSW', 'NNE']).toContain(s.end);
      const t = truthSep.get(s.isograd)!;
      if (s.separationKm.high === null) {
        if (s.separationKm.low <= t) openLowBelow++;
      } else if (t >= s.separationKm.low && t <= s.separationKm.high) closedInside++;
      // Sense: the hanging wall (ESE) shows each isograd displaced towards higher grade (the dome centre).
      expect(s.displacedTowardHigherGrade).toBe('ESE side (hanging wall)');
    }
    expect(f1.separations.length).toBe(8); // 4 isograds × 2 ends
    // 7 closed ranges contain the truth; the 1 open range (biotite-in SSW, below) has its lower bound under the truth.
    expect(closedInside).toBe(7);
    expect(openLowBelow).toBe(1);
    // The ranges come from the band where each isograd meets the trace, not from the map's sparsest stretches:
    // their median width stays within 15 km (it was about 20 km when the band was walked to its 0.1/0.9 ends).
    // One range is open: biotite-in at the SSW end, where both sides' 10 % bounds lie beyond their last chlorite
    // sample near the trace by more than the 10 km fault distance (the left side's by 12 km).
    const open = f1.separations.filter((s) => s.separationKm.high === null);
    expect(open.map((s) => `${s.isograd} ${s.end}`)).toEqual(['biotite-in SSW']);
    expect(open[0].separationKm.openReason).toBe('beyond sampled support');
    const widths = f1.separations.map((s) => (s.separationKm.high ?? Infinity) - s.separationKm.low).sort((a, b) => a - b);
    console.log(`F1 separation ranges (km): ${f1.separations.map(rangeText).join('; ')}`);
    expect((widths[3] + widths[4]) / 2).toBeLessThan(15);
    // The two sides' bands combine as independent errors (root sum of squares), not as the bound of every
    // combination. Each side's band is its true 10–90 % interval (walked 0.1/0.9 crossings, else the Gaussian-shape
    // half-width 0.5113/slope); the earlier 0.4/slope straight line covered only about 68 % and capped the widest
    // range at 21 km. With honest bands the widest closed range, kyanite-in at the SSW end, is 0–26.1 km; the truth
    // stays inside every closed range and above the open range's lower bound (checked above).
    expect(widths[6]).toBeLessThan(27);
  });

  it('F2 (thrust): garnet (with the zones around it) reported as repeated, none missing; biotite-in separation within its range', () => {
    // fixtures/truth.json F2.builtInOffset: repeatedZones chlorite, biotite, garnet; zonesMissing [].
    const f2 = fault('F2');
    expect(f2.hangingWall).toBe('left');
    expect(f2.higherWall).toBe('hanging wall');
    expect(f2.repeatedZones.map((z) => z.zone)).toContain('garnet');
    for (const z of f2.repeatedZones) expect(z.sampleIds.length).toBeGreaterThan(1);
    expect(f2.missingZones).toEqual([]);
    const bt = f2.separations.filter((s) => s.isograd === 'biotite-in');
    expect(bt.length).toBe(2);
    console.log(`F2 biotite-in ranges (km): ${bt.map(rangeText).join('; ')}`);
    for (const s of bt) expect(17.247).toBeGreaterThanOrEqual(s.separationKm.low);
    // At the S end the W side's meeting lies before its first sample near the trace (16.2 km along it, samples from
    // 23 km) and its band's low end would lie 112 km before that sample: the range is open beyond the sampled support
    // (it was reported as 0–129 km).
    const south = bt.find((s) => s.end === 'S')!;
    expect(south.separationKm.high).toBeNull();
    expect(south.separationKm.openReason).toBe('beyond sampled support');
    // The N end is sampled on both sides: a closed range holding the truth.
    const north = bt.find((s) => s.end === 'N')!;
    expect(north.separationKm.high).not.toBeNull();
    expect(17.247).toBeLessThanOrEqual(north.separationKm.high!);
  });

  it("F1 dip-slip component with the demo's isograd dip: the constructed 1.39 km inside the range, normal sense", () => {
    // Truth: throw 1.2 km on a 60° fault → d = 1.2/sin 60° = 1.386 km; isograd surfaces dip atan(5/25) = 11.3° outwards
    // (5 °C/km radial fall over a 25 °C/km paleo-gradient: fixtures/field.ts).
    const f1 = Lp.report.faults.find((f) => f.id === 'F1')!;
    const d = truth.faults.find((f: { id: string }) => f.id === 'F1').builtInOffset.dipSlipKm as number;
    let covered = 0;
    for (const s of f1.separations) {
      expect(s.slipSense).toBe('normal');
      if (s.dipSlipKm !== undefined && d >= s.dipSlipKm.low && (s.dipSlipKm.high === null || d <= s.dipSlipKm.high)) covered++;
    }
    expect(covered).toBeGreaterThanOrEqual(7); // of 8
    // The thrust's apparent separations read as reverse slip.
    for (const s of Lp.report.faults.find((f) => f.id === 'F2')!.separations) expect(s.slipSense).toBe('reverse');
  });

  it('faults without samples on one side report no jump rather than a guess', () => {
    for (const id of ['F3', 'F5', 'F6']) {
      expect(fault(id).gradeJump).toBeNull();
      expect(fault(id).separations).toEqual([]);
    }
  });
});

// The demo's samples and faults in the local km frame, the isograds computed there (once, for the tests below).
let km: { r: ReturnType<typeof computeIsogradsKm>; traces: ReturnType<typeof buildTrace>['trace'][]; ids: string[]; faults: Record<string, unknown>[] } | null =
  null;
function demoKm() {
  if (km !== null) return km;
  const s = JSON.parse(readFileSync('fixtures/demo/samples.geojson', 'utf8'));
  const fj = JSON.parse(readFileSync('fixtures/demo/faults.geojson', 'utf8'));
  const xy = s.features.map((q: { geometry: { coordinates: [number, number] } }) => kmFromLonLat(q.geometry.coordinates[0], q.geometry.coordinates[1]));
  const grades = sampleGrades(s.features.map((q: { properties: Record<string, unknown> }) => q.properties as { id: string }));
  const traces = fj.features.map(
    (q: { properties: { id: string }; geometry: { coordinates: [number, number][] } }) =>
      buildTrace(q.properties.id, [q.geometry.coordinates.map(([lon, lat]) => kmFromLonLat(lon, lat))]).trace,
  );
  const r = computeIsogradsKm(
    Float64Array.from(xy, (p: number[]) => p[0]),
    Float64Array.from(xy, (p: number[]) => p[1]),
    grades,
    tracePieces(traces),
    {},
  );
  km = { r, traces, ids: grades.map((g) => g.id), faults: fj.features.map((q: { properties: Record<string, unknown> }) => q.properties) };
  return km;
}

describe('demo region: where the isograds meet the faults', () => {
  it('each isograd meets F1 and F2 on each side as often as in the truth (no unpaired extra meeting)', () => {
    // fixtures/truth.json isogradSeparations: footwall and hanging-wall meetings per isograd (F1's footwall is its
    // left side, F2's hanging wall its left side, as the traces are drawn). OM-GS-226 (kyanite recorded in the
    // staurolite zone beside F1) and OM-GS-347 (beside F2) are deliberately mislabelled (truth.json
    // dome.mislabelledSamples): each lifts its side's profile across 0.5 and back, an excursion not a meeting.
    const { r, traces, ids, faults } = demoKm();
    for (const id of ['F1', 'F2']) {
      const k = traces.findIndex((t) => t.id === id);
      const p = faults[k] as { kind?: string; dipDeg?: number; dipDirectionDeg?: number };
      const rep = faultReport({ trace: traces[k], kind: p.kind, dipDeg: p.dipDeg, dipDirectionDeg: p.dipDirectionDeg }, r.field, {
        supportKm: r.supportKm,
        stationKm: 0.5,
        sampleIds: ids,
        contradicts: (i, j) => r.loo.contradicts(i, j),
      });
      const hw = rep.hangingWall!;
      for (const t of (truth.isogradSeparations as { fault: string; isograd: string; footwallMeetings?: unknown[]; hangingWallMeetings?: unknown[] }[]).filter(
        (q) => q.fault === id,
      )) {
        const count = (side: string) => rep.meetings.filter((m) => m.isograd === t.isograd && m.side === side).length;
        // An isograd without meetings on a wall has no list for it in the truth.
        expect(count(hw), `${id} ${t.isograd} hanging wall`).toBe(t.hangingWallMeetings?.length ?? 0);
        expect(count(hw === 'left' ? 'right' : 'left'), `${id} ${t.isograd} footwall`).toBe(t.footwallMeetings?.length ?? 0);
      }
      const dropped = rep.droppedExcursions.flatMap((e) => e.sampleIds);
      for (const sid of dropped) expect(truth.dome.mislabelledSamples).toContain(sid);
      console.log(
        `${id}: excursions not counted as meetings: ${rep.droppedExcursions.map((e) => `${e.isograd} ${e.side} around ${e.sampleIds.join(', ')}`).join('; ')}`,
      );
    }
  }, 300_000);
});

describe('demo region: probability bands', () => {
  it('the 0.1 and 0.9 lines bracket the true isograds for at least 80 % of their sampled length', () => {
    // The truth: fixtures/field.ts truePeakTemperatureC against ZONE_IN_C (the dome with both faults' offsets). Points
    // on each true isograd where a 0.25-km lattice edge crosses it, weighted by 1/(|nx| + |ny|) (n the isograd's unit
    // normal) so that the weights follow length; kept where samples support a line (nearest visible sample within
    // the support distance). Bracketed: the kriged probability of lying at or above the isograd is within [0.1, 0.9].
    // A lattice edge that crosses the trace of a fault offsetting the zones (F1, F2: truth.json builtInOffset) crosses
    // a fault contact, not the isograd: where a zone ends against a fault (sillimanite against F1 for 16 km, each other
    // isograd for about 6 km at each end of F1, and longer stretches of F2) the grade steps across the trace, the probability
    // steps from one side's value to the other's, and no band can lie across it. Those stretches are counted apart
    // (their length and the part of it inside the band are printed) and not held to the band.
    const { r } = demoKm();
    const offsetting = FAULTS.filter((f) => truth.faults.find((q: { id: string }) => q.id === f.id).builtInOffset.kind !== 'none');
    const crossesFault = (ax: number, ay: number, bx: number, by: number) => offsetting.some((f) => sideOfFault(f, ax, ay) < 0 !== sideOfFault(f, bx, by) < 0);
    const out = new Float64Array(5);
    const h = 0.25;
    const fractions: number[] = [];
    const contacts: string[] = [];
    let pooledIn = 0,
      pooledAll = 0;
    for (let j = 1; j <= 5; j++) {
      let inside = 0,
        total = 0,
        contactIn = 0,
        contactAll = 0;
      for (let x = DOME.xKm - 90; x < DOME.xKm + 90; x += h)
        for (let y = DOME.yKm - 90; y < DOME.yKm + 90; y += h) {
          const t0 = truePeakTemperatureC(x, y) - ZONE_IN_C[j];
          for (const [dx, dy] of [
            [h, 0],
            [0, h],
          ]) {
            const t1 = truePeakTemperatureC(x + dx, y + dy) - ZONE_IN_C[j];
            if (t0 < 0 === t1 < 0) continue;
            const u = t0 / (t0 - t1);
            const px = x + u * dx,
              py = y + u * dy;
            const gx = truePeakTemperatureC(px + 0.01, py) - truePeakTemperatureC(px - 0.01, py),
              gy = truePeakTemperatureC(px, py + 0.01) - truePeakTemperatureC(px, py - 0.01);
            const gl = Math.hypot(gx, gy);
            if (!(gl > 0)) continue;
            const w = 1 / (Math.abs(gx / gl) + Math.abs(gy / gl));
            if (!(r.field.predict(px, py, out) <= r.supportKm)) continue;
            const bracketed = out[j - 1] >= 0.1 && out[j - 1] <= 0.9;
            if (crossesFault(x, y, x + dx, y + dy)) {
              contactAll += w;
              if (bracketed) contactIn += w;
              continue;
            }
            total += w;
            if (bracketed) inside += w;
          }
        }
      fractions.push(inside / total);
      contacts.push(`${(contactAll * h).toFixed(1)} km (${(contactIn * h).toFixed(1)} in the band)`);
      pooledIn += inside;
      pooledAll += total;
    }
    const all = pooledIn / pooledAll;
    console.log(
      `demo: fraction of the true isograds' length bracketed by the 0.1/0.9 lines: ${fractions.map((f) => f.toFixed(3)).join(', ')} (biotite-in … sillimanite-in); all together ${all.toFixed(3)}; fault contacts apart: ${contacts.join(', ')}`,
    );
    expect(all).toBeGreaterThanOrEqual(0.8);
    for (const f of fractions) expect(f).toBeGreaterThanOrEqual(0.8);
    // About 1.5 million kriged predictions: a minute on a busy machine; the test asserts no wall time.
  }, 300_000);
});

describe('demo region: paleo-gradients', () => {
  it("apparent gradients of the P–T samples centre on the generator's 25 °C/km", () => {
    // The demo's P–T were made with a 25 °C/km paleo-gradient and ρ = 2750 kg/m³ (fixtures/generate.ts); we use
    // ρ = 2700, which deepens z by 1.9 % and lowers the gradient by as much; plus ±15 °C and ±0.4 kbar noise.
    const g = L.report.paleoGradients.map((p) => p.apparentGradientCPerKm).sort((a, b) => a - b);
    expect(g.length).toBeGreaterThanOrEqual(5);
    expect(Math.abs(g[g.length >> 1] - 25)).toBeLessThan(3);
  });
});
