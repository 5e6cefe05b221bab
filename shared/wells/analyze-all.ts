import { analyzeWell, type WellAnalysisOptions, type WellReport } from './analyze.ts';
import type { WellInput } from './checks.ts';
import { wellSites, type WellSiteProperties } from './sites.ts';
import type { FeatureCollection, PointGeometry } from '../schema/geojson.ts';
import { CORRECTION_UNITS, type SiteCorrectionReport } from '../heatflow/sites.ts';

export interface WellsAnalysis {
  reports: WellReport[];
  sites: FeatureCollection<PointGeometry, WellSiteProperties>;
  /** One line per well without a heat flow, and per well-level flag worth a user's attention. */
  warnings: string[];
}

/** Flags that only describe how a value was made (shown in the report, not repeated as warnings). */
const QUIET = new Set(['duplicate-depth']);

/**
 * Analyses every well (analyzeWell) and turns the ones with a heat flow into heat-flow sites (wellSites).
 * Warnings name the well: why it gave no heat flow, and each of its flags.
 */
export function analyzeWells(wells: WellInput[], opts: WellAnalysisOptions = {}): WellsAnalysis {
  const reports = wells.map((w) => analyzeWell(w, opts));
  const warnings: string[] = [];
  for (const r of reports) {
    if (r.status !== 'ok') warnings.push(`well ${r.id}: no heat flow: ${r.reason ?? r.status}`);
    for (const f of r.flags) if (!QUIET.has(f.code) && f.message !== r.reason) warnings.push(`well ${r.id}: ${f.message}`);
  }
  return { reports, sites: wellSites(reports), warnings };
}

/**
 * One correction report per well with a heat flow: its heat flow before and after the paleoclimatic and
 * topographic corrections and each correction's size, or why it was not corrected.
 */
export function wellCorrectionReports(reports: WellReport[]): SiteCorrectionReport[] {
  const out: SiteCorrectionReport[] = [];
  for (const r of reports) {
    const h = r.heatFlow;
    if (!h) continue;
    const reason = h.corrections ? undefined : (r.flags.find((f) => f.code === 'heat-flow-correction-failed')?.message ?? 'not corrected');
    out.push({
      id: r.id,
      source: 'well',
      status: h.corrections ? 'corrected' : 'not-applicable',
      ...(reason === undefined ? {} : { reason }),
      rawHeatFlowMWm2: h.uncorrectedHeatFlowMWm2,
      correctedHeatFlowMWm2: h.heatFlowMWm2,
      interval: h.corrections,
      units: CORRECTION_UNITS,
    });
  }
  return out;
}
