import { correctIntervalGradient, type HeatFlowCorrectionOptions, type IntervalCorrection } from './corrections.ts';

/** Units of every number in a correction report. */
export const CORRECTION_UNITS = { heatFlow: 'mW/m²', gradient: '°C/km', depth: 'm below ground', conductivity: 'W/m/K' } as const;

/** Corrections of one heat-flow site or well: raw value, each correction, corrected value. */
export interface SiteCorrectionReport {
  id: string;
  /** 'site' for a heat-flow site with intervalTopM/intervalBottomM, 'well' for a well analysed here. */
  source: 'site' | 'well';
  status: 'corrected' | 'not-applicable';
  /** Why nothing was corrected (status not-applicable). */
  reason?: string;
  rawHeatFlowMWm2: number;
  correctedHeatFlowMWm2: number;
  interval?: IntervalCorrection;
  units: typeof CORRECTION_UNITS;
}

/** The flat properties a corrected site carries (GeoJSON- and GeoPackage-friendly). */
export interface CorrectionProperties {
  uncorrectedHeatFlowMWm2: number;
  paleoclimateCorrectionMWm2: number | null;
  topographicCorrectionMWm2: number | null;
  heatFlowCorrections: string;
}

const round = (v: number, d: number) => Math.round(v * 10 ** d) / 10 ** d;

/** The properties recording an interval's corrections (values rounded to 0.01 mW/m²). */
export function correctionProperties(raw: number, c: IntervalCorrection): CorrectionProperties {
  const of = (kind: string) => {
    const e = c.corrections.find((x) => x.kind === kind);
    return e === undefined ? null : round(e.heatFlowChangeMWm2, 2);
  };
  return {
    uncorrectedHeatFlowMWm2: round(raw, 2),
    paleoclimateCorrectionMWm2: of('paleoclimate'),
    topographicCorrectionMWm2: of('topographic'),
    heatFlowCorrections: c.corrections.map((x) => `${x.kind}: ${x.method}`).join('; '),
  };
}

type Props = Record<string, unknown>;
const num = (p: Props, k: string): number | undefined => {
  const v = p[k];
  return typeof v === 'number' && Number.isFinite(v) ? v : undefined;
};

/**
 * Corrects heat-flow sites that give the depth interval of their gradient (`intervalTopM`, `intervalBottomM`, m
 * below ground) and either `gradientCPerKm` or `conductivityWmK` (the other is heatFlowMWm2 divided by it).
 * Sites without them are returned unchanged with a report saying why. A corrected site's heatFlowMWm2 is the
 * corrected value; its properties keep the raw value and each correction (correctionProperties).
 */
export function correctSites<F extends { id?: string | number; geometry: { type: 'Point'; coordinates: number[] }; properties: Props }>(
  features: F[],
  opts: HeatFlowCorrectionOptions,
): { features: F[]; reports: SiteCorrectionReport[] } {
  const reports: SiteCorrectionReport[] = [];
  const out = features.map((f, i) => {
    const p = f.properties;
    const pid = p.id;
    const id = typeof pid === 'string' || typeof pid === 'number' ? String(pid) : String(f.id ?? i);
    const q = num(p, 'heatFlowMWm2');
    const top = num(p, 'intervalTopM'),
      bottom = num(p, 'intervalBottomM');
    let g = num(p, 'gradientCPerKm'),
      k = num(p, 'conductivityWmK');
    const skip = (reason: string) => {
      reports.push({
        id,
        source: 'site',
        status: 'not-applicable',
        reason,
        rawHeatFlowMWm2: q ?? NaN,
        correctedHeatFlowMWm2: q ?? NaN,
        units: CORRECTION_UNITS,
      });
      return f;
    };
    if (q === undefined || !(q > 0)) return skip('no positive heatFlowMWm2');
    if (top === undefined || bottom === undefined) return skip('no intervalTopM/intervalBottomM (the depths of the measured gradient)');
    if (!(top >= 0 && bottom > top)) return skip(`interval ${top}–${bottom} m is not 0 ≤ top < bottom`);
    if (g === undefined && k !== undefined && k > 0) g = q / k;
    if (k === undefined && g !== undefined && g > 0) k = q / g;
    if (g === undefined || k === undefined || !(g > 0) || !(k > 0))
      return skip('needs gradientCPerKm or conductivityWmK (positive) to turn a gradient change into a heat-flow change');
    const [lon, lat] = f.geometry.coordinates;
    let c: IntervalCorrection;
    try {
      c = correctIntervalGradient({ lonLat: [lon, lat], topM: top, bottomM: bottom, gradientCPerKm: g, conductivityWmK: k }, opts);
    } catch (e) {
      // A site off the terrain (no elevation there) or an interval the correction cannot take: named, not fatal.
      if (e instanceof RangeError) return skip(e.message);
      throw e;
    }
    const corrected = q + c.totalHeatFlowChangeMWm2;
    reports.push({ id, source: 'site', status: 'corrected', rawHeatFlowMWm2: q, correctedHeatFlowMWm2: corrected, interval: c, units: CORRECTION_UNITS });
    return { ...f, properties: { ...p, heatFlowMWm2: round(corrected, 2), ...correctionProperties(q, c) } };
  });
  return { features: out, reports };
}

/** A plain-text table of correction reports: raw, each correction and corrected heat flow (mW/m²). */
export function correctionTable(reports: SiteCorrectionReport[]): string {
  const f = (v: number | undefined) => (v === undefined || !Number.isFinite(v) ? '—' : v.toFixed(2));
  const head = ['id', 'from', 'interval m', 'raw mW/m²', 'paleoclimate mW/m²', 'topographic mW/m²', 'corrected mW/m²', 'note'];
  const rows = reports.map((r) => {
    const c = r.interval;
    const of = (kind: string) => c?.corrections.find((x) => x.kind === kind)?.heatFlowChangeMWm2;
    return [
      r.id,
      r.source,
      c ? `${c.topM.toFixed(0)}–${c.bottomM.toFixed(0)}` : '—',
      f(r.rawHeatFlowMWm2),
      f(of('paleoclimate')),
      f(of('topographic')),
      f(r.correctedHeatFlowMWm2),
      r.reason ?? c?.notes.join('; ') ?? '',
    ];
  });
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i].length)));
  const line = (r: string[]) =>
    r
      .map((v, i) => v.padEnd(widths[i]))
      .join('  ')
      .trimEnd();
  return [line(head), line(widths.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n');
}
