/**
 * The isograd layer: validated grade samples and fault traces (GeoJSON, WGS84 lon/lat) in, isograd lines
 * (GeoJSON LineStrings, higher grade on the right of each line) and the report (isograds, fault report,
 * misfits, paleo-gradients) out. All work happens in the interpolation engine's local transverse Mercator frame
 * centred on the samples (shared/interp/projection.ts); distances are km.
 */
import { CAUTION } from '../caution.ts';
import { InputError, type InputProblem } from '../errors.ts';
import { ZONE_NAMES } from '../petrology/index.ts';
import type { FaultCollection, SampleCollection } from '../schema/features.ts';
import type { CompiledModel } from '../thermal/index.ts';
import { TOOL_NAME, VERSION } from '../version.ts';
import { converter, localProjectionFor, lonLatToLocalKm, WGS84_DEF } from '../interp/projection.ts';
import { sampleGrades, type SampleGrade } from './grade.ts';
import { BOUNDARY_COUNT } from './indicator.ts';
import { variogramsText } from './indicator-variograms.ts';
import { computeIsogradsKm, type IsogradGridOptions, type IsogradResultKm } from './isograds.ts';
import { findMisfits, type Misfit } from './misfits.ts';
import { faultReport, type FaultReport, type Range } from './fault-report.ts';
import { buildTrace, tracePieces, type Trace } from './trace.ts';
import { paleoGradients, type PaleoGradient, type PaleoOptions } from './paleo.ts';

export interface IsogradLayerOptions extends IsogradGridOptions {
  /** Samples within this distance of a fault count for its report, km (default 10). */
  faultDistanceKm?: number;
  /** Station spacing along fault traces, km (default: half the cell, at most 0.5). */
  stationKm?: number;
  maxSeparationKm?: number;
  /** Support distance for stations along fault traces, km (default: the larger of supportKm and 1.5 × faultDistanceKm). */
  stationSupportKm?: number;
  /** A sample is a misfit when its own zone's leave-one-out probability is below this (default 0.3). */
  misfitProbability?: number;
  /** Dip of the isograd surfaces, degrees, towards lower grade: enables the dip-slip component of separations. */
  isogradDipDeg?: number;
  /** Paleo-gradient options (density, model, heat flow). */
  paleo?: PaleoOptions;
  /** Thermal model for today's geotherm (compiled); same as paleo.model. */
  model?: CompiledModel | null;
  heatFlowMWm2?: number;
}

export interface IsogradSummary {
  isograd: string;
  mineral: string;
  rank: number;
  lines: number;
  lengthKm: number;
  /** Samples decided at or above / below this isograd. */
  samplesAbove: number;
  samplesBelow: number;
  /** Width of the 0.1–0.9 probability band along the isograd, km (over points every ~2 km), null when not drawn. */
  bandWidthKm: { median: number; p10: number; p90: number; max: number } | null;
  /** The indicator variogram used (kriging), null for IDW. */
  variogram: { source: string; model: string; nugget: number; partialSill: number; rangeKm: number; samples: number } | null;
  /** Samples whose recorded side disagrees with the isograd, with their leave-one-out probability of lying at or above it. */
  disagreeing: { id: string; says: 'at or above' | 'below'; probability: number }[];
}

const rr = (v: number) => Math.round(v * 100) / 100;
const rng = (r: Range): Range => {
  const o: Range = { value: rr(r.value), low: rr(r.low), high: r.high === null ? null : rr(r.high) };
  if (r.openReason !== undefined) o.openReason = r.openReason;
  return o;
};

/** A fault's report as exported (CLI --json, run summary, web panel): the statements, rounded to 10 m. */
export function faultSummary(f: FaultReport) {
  return {
    id: f.id,
    name: f.name,
    kind: f.kind,
    lengthKm: rr(f.lengthKm),
    strikeDeg: rr(f.strikeDeg),
    hangingWall: f.hangingWall,
    sideNames: f.sideNames,
    gradeJump: f.gradeJump,
    higherSide: f.higherSide,
    higherWall: f.higherWall,
    repeatedZones: f.repeatedZones,
    missingZones: f.missingZones,
    notReached: f.notReached,
    offsetOnly: f.offsetOnly,
    separations: f.separations.map((s) => {
      const o: Record<string, unknown> = {
        isograd: s.isograd,
        end: s.end,
        separationKm: rng(s.separationKm),
        sense: s.sense,
        displacedTowardHigherGrade: s.displacedTowardHigherGrade,
        leftAlongKm: rr(s.leftAlongKm),
        rightAlongKm: rr(s.rightAlongKm),
      };
      if (s.dipSlipKm !== undefined) {
        o.dipSlipKm = rng(s.dipSlipKm);
        o.slipSense = s.slipSense;
        o.cutoffPitchDeg = rr(s.cutoffPitchDeg as number);
      }
      return o as {
        isograd: string;
        end: string;
        separationKm: Range;
        sense: string;
        displacedTowardHigherGrade: string;
        leftAlongKm: number;
        rightAlongKm: number;
        dipSlipKm?: Range;
        slipSense?: string;
        cutoffPitchDeg?: number;
      };
    }),
    droppedExcursions: f.droppedExcursions.map((e) => ({ ...e, fromKm: rr(e.fromKm), toKm: rr(e.toKm) })),
    sides: f.sides,
    overlapAlongKm: f.overlapAlongKm === null ? null : [rr(f.overlapAlongKm[0]), rr(f.overlapAlongKm[1])],
    warnings: f.warnings,
  };
}
export type FaultSummary = ReturnType<typeof faultSummary>;

export interface IsogradReport {
  isograds: IsogradSummary[];
  faults: FaultSummary[];
  /** Each sample's derived grade. */
  samples: { id: string; zone: string | null; source: 'zone' | 'facies' | 'peak-pt' | 'none'; series: string | null; aluminosilicate?: string }[];
  misfits: Misfit[];
  paleoGradients: PaleoGradient[];
  method: {
    indicator: string;
    power: number;
    neighbors: number;
    cellKm: number;
    grid: { width: number; height: number };
    supportKm: number;
    faultBarriers: boolean;
    projection: string;
    highSide: 'right';
    gradeRules: string;
  };
  sampleCounts: { total: number; zone: number; facies: number; peakPt: number; none: number };
  droppedLoops: { isograd: string; samples: string[] }[];
  warnings: string[];
  timingsMs: Record<string, number>;
}

export interface IsogradLayer {
  lines: {
    type: 'FeatureCollection';
    caution: string;
    provenance: Record<string, unknown>;
    features: { type: 'Feature'; geometry: { type: 'LineString'; coordinates: number[][] }; properties: Record<string, unknown> }[];
  };
  report: IsogradReport;
}

const r6 = (v: number) => Math.round(v * 1e6) / 1e6;
const r3 = (v: number) => Math.round(v * 1e3) / 1e3;

/** Fault traces of a fault collection in the local frame; problems (zero length, bad vertices) are an InputError. */
export function faultTraces(
  faults: FaultCollection,
  toLocal: (p: [number, number]) => [number, number],
  warnings: string[],
): { traces: Trace[]; info: FaultCollection['features'] } {
  const problems: InputProblem[] = [];
  const traces: Trace[] = [];
  faults.features.forEach((f, i) => {
    const id = String(f.properties.id ?? f.id ?? `faults-${i + 1}`);
    const label = `${i} (${id})`;
    const g = f.geometry as { type: string; coordinates: number[][] | number[][][] };
    const parts = g.type === 'LineString' ? [g.coordinates as number[][]] : (g.coordinates as number[][][]);
    if (!Array.isArray(parts) || parts.some((p) => !Array.isArray(p) || p.length < 2)) {
      problems.push({ feature: label, field: 'geometry.coordinates', problem: 'a fault trace needs at least two vertices' });
      return;
    }
    const local = parts.map((p) => p.map((q) => toLocal([q[0], q[1]])));
    const b = buildTrace(id, local);
    for (const p of b.problems) problems.push({ feature: label, field: 'geometry.coordinates', problem: p });
    for (const w of b.warnings) warnings.push(`fault ${label}: ${w}`);
    if (b.problems.length === 0) traces.push(b.trace);
  });
  if (problems.length > 0)
    throw new InputError(
      `${problems.length} problem(s) in the faults; first: fault ${problems[0].feature}: ${problems[0].problem}`,
      problems,
      'invalid_features',
    );
  return { traces, info: faults.features };
}

/** The isograd lines as GeoJSON features in lon/lat (inverse: local km → lon/lat), with their properties. */
function lineFeatures(lines: IsogradResultKm['lines'], inverse: (p: [number, number]) => number[]): IsogradLayer['lines']['features'] {
  return lines.map((l) => {
    const coordinates: number[][] = [];
    for (let i = 0; i < l.coords.length; i += 2) {
      const q = inverse([l.coords[i], l.coords[i + 1]]);
      coordinates.push([r6(q[0]), r6(q[1])]);
    }
    return {
      type: 'Feature',
      geometry: { type: 'LineString', coordinates },
      properties: {
        isograd: l.isograd,
        probability: l.probability,
        mineral: l.mineral,
        rank: l.rank,
        highSide: 'right',
        closed: l.closed,
        lengthKm: r3(l.lengthKm),
        ...(l.bandWidthKm !== undefined ? { bandWidthKm: l.bandWidthKm } : {}),
        supportRadiusKm: l.support.radiusKm,
        samplesNearMidpoint: l.support.samplesNearMidpoint,
        meanSamplesPerVertex: r3(l.support.meanSamplesPerVertex),
        minSamplesPerVertex: l.support.minSamplesPerVertex,
      },
    };
  });
}

/** One summary per isograd: its 0.5 lines' count and length, the samples each side, band widths, variogram, disagreeing samples. */
function isogradSummaries(res: IsogradResultKm, isoLines: IsogradResultKm['lines'], grades: SampleGrade[]): IsogradSummary[] {
  const isograds: IsogradSummary[] = [];
  for (let j = 1; j <= BOUNDARY_COUNT; j++) {
    const ls = isoLines.filter((l) => l.rank === j);
    let above = 0,
      below = 0;
    for (const g of grades) {
      if (g.lo < 0) continue;
      if (g.lo >= j) above++;
      else if (g.hi < j) below++;
    }
    const widths = ls
      .flatMap((l) => l.bandWidthKm?.widthKm ?? [])
      .filter((v): v is number => v !== null)
      .sort((a, b) => a - b);
    const v = res.field.variograms[j - 1];
    isograds.push({
      isograd: `${ZONE_NAMES[j]}-in`,
      mineral: ZONE_NAMES[j],
      rank: j,
      lines: ls.length,
      lengthKm: r3(ls.reduce((s, l) => s + l.lengthKm, 0)),
      samplesAbove: above,
      samplesBelow: below,
      bandWidthKm:
        widths.length > 0
          ? {
              median: widths[widths.length >> 1],
              p10: widths[Math.floor(0.1 * (widths.length - 1))],
              p90: widths[Math.ceil(0.9 * (widths.length - 1))],
              max: widths[widths.length - 1],
            }
          : null,
      variogram:
        v === null || v === undefined
          ? null
          : {
              source: v.source,
              model: v.model.model,
              nugget: r3(v.model.nugget),
              partialSill: r3(v.model.partialSill),
              rangeKm: r3(v.model.rangeKm),
              samples: v.samples,
            },
      disagreeing: res.disagreeing[j - 1].samples.map((q) => ({ id: q.id, says: q.says, probability: q.probability })),
    });
  }
  return isograds;
}

/** The method as reported: the indicator method in words, its parameters, the grid, support, barriers and frame. */
function reportMethod(opts: IsogradLayerOptions, res: IsogradResultKm, projection: string, faultBarriers: boolean): IsogradReport['method'] {
  const kriging = (opts.method ?? 'kriging') === 'kriging';
  const power = opts.power ?? 2,
    neighbors = opts.neighbors ?? (kriging ? 16 : 12);
  return {
    indicator: kriging
      ? `indicator kriging (Journel 1983): ordinary kriging of each isograd's indicator, ${neighbors} nearest visible samples, ${variogramsText(res.field.variograms)}, order relations corrected; isograd = 0.5 contour, band = 0.1 and 0.9 contours (marching squares)`
      : `indicator inverse-distance weighting (Shepard 1968), power ${power}, ${neighbors} nearest visible samples; isograd = 0.5 contour, band = 0.1 and 0.9 contours (marching squares)`,
    power,
    neighbors,
    cellKm: res.grid.cellKm,
    grid: { width: res.grid.width, height: res.grid.height },
    supportKm: r3(res.supportKm),
    faultBarriers,
    projection,
    highSide: 'right',
    gradeRules:
      "zone → its rank; facies only → ranks whose isograd midpoint temperature lies in the facies field's span; peak T–P only → ranks between the isograd temperature ranges certainly and possibly crossed; partial samples inform only the isograds they decide",
  };
}

/**
 * Isograd lines and the structural report from grade samples and (optionally) fault traces. Samples and faults
 * must be validated collections (parseFeatureCollection 'samples' / 'faults'); unknown zone or facies names throw
 * an InputError with the nearest valid name.
 */
export function isogradLayer(samples: SampleCollection, faults: FaultCollection | null, opts: IsogradLayerOptions = {}): IsogradLayer {
  const warnings: string[] = [];
  const feats = samples.features;
  const n = feats.length;
  const lon = new Float64Array(n),
    lat = new Float64Array(n);
  feats.forEach((f, i) => {
    lon[i] = f.geometry.coordinates[0];
    lat[i] = f.geometry.coordinates[1];
  });
  const props = feats.map((f, i) => ({ ...f.properties, id: String(f.properties.id ?? f.id ?? `samples-${i + 1}`) }));
  const grades: SampleGrade[] = sampleGrades(props, warnings);
  const proj = localProjectionFor(lon, lat);
  const x = new Float64Array(n),
    y = new Float64Array(n);
  lonLatToLocalKm(proj, lon, lat, x, y);
  const conv = converter(WGS84_DEF, proj.def);

  let traces: Trace[] = [];
  let info: FaultCollection['features'] = [];
  if (faults !== null && faults.features.length > 0) ({ traces, info } = faultTraces(faults, (p) => conv.forward(p), warnings));
  const pieces = traces.length > 0 ? tracePieces(traces) : null;

  const res = computeIsogradsKm(x, y, grades, pieces, opts);
  warnings.push(...res.warnings);
  const isoLines = res.lines.filter((l) => l.probability === 0.5);
  const misfits = findMisfits(res.field, res.loo, grades, isoLines, opts.misfitProbability);

  const stationKm = opts.stationKm ?? Math.min(0.5, res.grid.cellKm / 2);
  const reports: FaultReport[] = traces.map((t, k) => {
    const p = info[k].properties;
    const r = faultReport({ trace: t, name: p.name, kind: p.kind, dipDeg: p.dipDeg, dipDirectionDeg: p.dipDirectionDeg }, res.field, {
      faultDistanceKm: opts.faultDistanceKm,
      stationKm,
      supportKm: res.supportKm,
      maxSeparationKm: opts.maxSeparationKm,
      stationSupportKm: opts.stationSupportKm,
      sampleIds: props.map((q) => q.id),
      isogradDipDeg: opts.isogradDipDeg,
      contradicts: (i, j) => res.loo.contradicts(i, j),
    });
    for (const w of r.warnings) warnings.push(`fault ${t.id}: ${w}`);
    return r;
  });

  const paleo = paleoGradients(props, {
    ...(opts.paleo ?? {}),
    model: opts.model ?? opts.paleo?.model ?? null,
    heatFlowMWm2: opts.heatFlowMWm2 ?? opts.paleo?.heatFlowMWm2,
  });

  const features = lineFeatures(res.lines, (p) => conv.inverse(p));
  const isograds = isogradSummaries(res, isoLines, grades);
  const count = (s: string) => grades.filter((g) => g.source === s).length;
  const report: IsogradReport = {
    isograds,
    faults: reports.map(faultSummary),
    misfits,
    paleoGradients: paleo,
    samples: grades.map((g) => {
      const o: IsogradReport['samples'][number] = { id: g.id, zone: g.label, source: g.source, series: g.series };
      if (g.aluminosilicate !== undefined) o.aluminosilicate = g.aluminosilicate;
      return o;
    }),
    method: reportMethod(opts, res, proj.def, pieces !== null),
    sampleCounts: { total: n, zone: count('zone'), facies: count('facies'), peakPt: count('peak-pt'), none: count('none') },
    droppedLoops: res.droppedLoops,
    warnings,
    timingsMs: res.timingsMs,
  };
  const provenance = {
    tool: TOOL_NAME,
    version: VERSION,
    method: report.method.indicator,
    highSide: 'right',
    cellKm: res.grid.cellKm,
    supportKm: r3(res.supportKm),
  };
  return { lines: { type: 'FeatureCollection', caution: CAUTION, provenance, features }, report };
}
