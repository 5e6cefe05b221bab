/**
 * The structure report beside the map: faults (from the fault data set, with the run's fault report when it has
 * one) and isograds (from the run's isograd layer). Selecting a fault highlights it and its samples: those the
 * report assigns to it, else the samples within a distance of its trace.
 */
import type { Map as MapLibreMap } from 'maplibre-gl';
import { pointSegmentDistance2 } from '../../shared/grid/segment.ts';
import { el, replace } from './dom.ts';
import { faultDetails, faultTable, isogradLineTable, isogradSummaryTable, lines, sampleGradeList } from './structure-tables.ts';
import type { IsogradReport, IsogradSummary } from '../../shared/structure/layer.ts';

/** Each sample's derived grade as the run reports it (the run summary's `structure.samples`). */
export type SampleGrade = IsogradReport['samples'][number];

type Feature = { type: 'Feature'; id?: string | number; properties: Record<string, unknown> | null; geometry: { type: string; coordinates: unknown } | null };
export type FeatureCollection = { type: 'FeatureCollection'; features: Feature[] };

/** Samples within this distance of a fault trace count as "its samples" when the run gives no assignment, km. */
export const FAULT_SAMPLE_DISTANCE_KM = 3;
const KM_PER_DEG = 111.195; // mean Earth radius 6371.0088 km × π/180

/** Distance from a point to a polyline, km, in a local equirectangular frame (adequate over a few km); the segment
 * distance is shared/grid/segment.ts's. */
export function distanceToLineKm(p: number[], line: number[][]): number {
  const kx = KM_PER_DEG * Math.cos((p[1] * Math.PI) / 180),
    ky = KM_PER_DEG;
  let best = Infinity;
  for (let i = 1; i < line.length; i++) {
    best = Math.min(
      best,
      pointSegmentDistance2(0, 0, (line[i - 1][0] - p[0]) * kx, (line[i - 1][1] - p[1]) * ky, (line[i][0] - p[0]) * kx, (line[i][1] - p[1]) * ky),
    );
  }
  return Math.sqrt(best);
}

/** A fault's row of the run's structural report (the run summary's `structure.faults`). */
export interface FaultReportRow {
  id: string;
  [k: string]: unknown;
}

export class StructurePanel {
  readonly root = el('div', { id: 'structure' });
  private faults: FeatureCollection = { type: 'FeatureCollection', features: [] };
  private samples: FeatureCollection = { type: 'FeatureCollection', features: [] };
  private isograds: FeatureCollection | null = null;
  private report: FaultReportRow[] = [];
  private isogradSummary: IsogradSummary[] = [];
  private sampleGrades: SampleGrade[] = [];
  private selected: string | null = null;

  constructor(private readonly map: MapLibreMap) {}

  setData(faults: FeatureCollection, samples: FeatureCollection): void {
    this.faults = faults;
    this.samples = samples;
    this.render();
  }

  setRun(report: FaultReportRow[], isograds: FeatureCollection | null, isogradSummary: IsogradSummary[] = [], sampleGrades: SampleGrade[] = []): void {
    this.report = report;
    this.sampleGrades = sampleGrades;
    this.isogradSummary = isogradSummary;
    this.isograds = isograds;
    this.render();
    this.styleBands();
  }

  /** The 0.1 and 0.9 lines of each isograd (its probability band) draw fainter than the isograd, without ticks. */
  private styleBands(): void {
    const apply = () => {
      if (this.map.getLayer('run-isograds'))
        this.map.setPaintProperty('run-isograds', 'line-opacity', ['case', ['==', ['coalesce', ['get', 'probability'], 0.5], 0.5], 1, 0.4]);
      if (this.map.getLayer('run-isograds-ticks')) this.map.setFilter('run-isograds-ticks', ['==', ['coalesce', ['get', 'probability'], 0.5], 0.5]);
    };
    apply();
    this.map.once('idle', apply);
  }

  private samplesOf(id: string): string[] {
    const row = this.report.find((r) => String(r.id) === id || String(r.faultId) === id);
    const listed = row?.sampleIds ?? row?.samples;
    if (Array.isArray(listed)) return listed.map(String);
    const f = this.faults.features.find((x) => String(x.properties?.id ?? x.id) === id);
    if (!f) return [];
    const ls = lines(f.geometry);
    return this.samples.features
      .filter((s) => s.geometry?.type === 'Point' && ls.some((l) => distanceToLineKm(s.geometry!.coordinates as number[], l) <= FAULT_SAMPLE_DISTANCE_KM))
      .map((s) => String(s.properties?.id ?? s.id));
  }

  select(id: string | null): void {
    this.selected = id;
    const sampleIds = id === null ? [] : this.samplesOf(id);
    if (this.map.getLayer('fault-highlight')) this.map.setFilter('fault-highlight', ['==', ['to-string', ['get', 'id']], id ?? '\u0000none']);
    if (this.map.getLayer('sample-highlight')) this.map.setFilter('sample-highlight', ['in', ['to-string', ['get', 'id']], ['literal', sampleIds]]);
    for (const tr of this.root.querySelectorAll('tr[data-fault]')) {
      const on = tr.getAttribute('data-fault') === id;
      tr.classList.toggle('selected', on);
      tr.querySelector('button')?.setAttribute('aria-pressed', String(on));
    }
    const info = this.root.querySelector('#fault-selection');
    if (info)
      info.textContent =
        id === null
          ? ''
          : `Fault ${id}: ${sampleIds.length} sample${sampleIds.length === 1 ? '' : 's'} highlighted${this.report.length > 0 ? '' : ` (within ${FAULT_SAMPLE_DISTANCE_KM} km of the trace)`}.`;
  }

  private render(): void {
    const faults = faultTable(this.faults, this.report, (id) => this.select(this.selected === id ? null : id));
    const parts: (HTMLElement | null)[] = [
      el('h3', {}, 'Faults'),
      faults ?? el('p', { class: 'empty' }, 'No faults in the data.'),
      el('p', { class: 'note', id: 'fault-selection', 'aria-live': 'polite' }),
    ];
    // Each reported fault: its zone statements (with the samples behind them) and its separations.
    const details = this.report.filter((r) => Array.isArray(r.separations) || Array.isArray(r.repeatedZones)).map((r) => faultDetails(r));
    if (details.length > 0) parts.push(el('div', { id: 'fault-details' }, ...details));
    parts.push(el('h3', {}, 'Isograds'));
    if (this.isogradSummary.length > 0) parts.push(...isogradSummaryTable(this.isogradSummary));
    else if (this.isograds === null) parts.push(el('p', { class: 'empty' }, 'Isograds are drawn from the samples by a run: none yet.'));
    else parts.push(isogradLineTable(this.isograds));
    if (this.sampleGrades.length > 0) parts.push(sampleGradeList(this.sampleGrades));
    replace(this.root, ...parts);
    if (this.selected !== null) this.select(this.selected);
  }
}
