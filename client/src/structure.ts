/**
 * The structure report beside the map: faults (from the fault data set, with the run's fault report when it has
 * one) and isograds (from the run's isograd layer). Selecting a fault highlights it and its samples: those the
 * report assigns to it, else the samples within a distance of its trace.
 */
import type { Map as MapLibreMap } from 'maplibre-gl';
import { pointSegmentDistance2 } from '../../shared/grid/segment.ts';
import { el, fmt, replace } from './dom.ts';
import type { IsogradReport, IsogradSummary } from '../../shared/structure/layer.ts';

/** Each sample's derived grade as the run reports it (the run summary's `structure.samples`). */
export type SampleGrade = IsogradReport['samples'][number];

/** How a sample's grade was found, in words. */
const GRADE_SOURCE: Record<SampleGrade['source'], string> = { zone: 'zone', facies: 'facies', 'peak-pt': 'peak P–T', none: 'none' };

type Feature = { type: 'Feature'; id?: string | number; properties: Record<string, unknown> | null; geometry: { type: string; coordinates: unknown } | null };
export type FeatureCollection = { type: 'FeatureCollection'; features: Feature[] };

/** Samples within this distance of a fault trace count as "its samples" when the run gives no assignment, km. */
export const FAULT_SAMPLE_DISTANCE_KM = 3;
const KM_PER_DEG = 111.195; // mean Earth radius 6371.0088 km × π/180

function lines(g: Feature['geometry']): number[][][] {
  if (g?.type === 'LineString') return [g.coordinates as number[][]];
  if (g?.type === 'MultiLineString') return g.coordinates as number[][][];
  return [];
}

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

function lengthKm(ls: number[][][]): number {
  let s = 0;
  for (const l of ls)
    for (let i = 1; i < l.length; i++) {
      const kx = KM_PER_DEG * Math.cos((l[i][1] * Math.PI) / 180);
      s += Math.hypot((l[i][0] - l[i - 1][0]) * kx, (l[i][1] - l[i - 1][1]) * KM_PER_DEG);
    }
  return s;
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
    // The run's fault report columns (shared/structure/fault-report.ts): the grade jump across the fault, the
    // higher-grade side, zones missing on one side, and isograd separations along the trace.
    const reportCols: { label: string; value: (r: FaultReportRow) => unknown }[] =
      this.report.length === 0
        ? []
        : [
            { label: 'Grade jump (zones)', value: (r) => r.gradeJump },
            { label: 'Higher grade', value: (r) => r.higherWall ?? r.higherSide },
          ];
    const faultRows = this.faults.features.map((f) => {
      const p = f.properties ?? {};
      const id = String(p.id ?? f.id ?? '');
      const r = this.report.find((x) => String(x.id) === id || String(x.faultId) === id);
      const btn = el('button', { type: 'button', class: 'rowbtn', 'aria-pressed': 'false' }, String(p.name ?? id));
      btn.addEventListener('click', () => this.select(this.selected === id ? null : id));
      return el(
        'tr',
        { 'data-fault': id },
        el('td', {}, btn),
        el('td', {}, String(p.kind ?? 'unknown')),
        el('td', { class: 'num' }, typeof p.dipDeg === 'number' ? `${p.dipDeg}°` : '—'),
        el('td', { class: 'num' }, fmt(lengthKm(lines(f.geometry)), 1)),
        ...reportCols.map((c) => el('td', {}, r ? formatCell(c.value(r)) : '—')),
      );
    });
    const faultTable = el(
      'table',
      // Fixed layout over the panel's width, long words wrapping: no column is cut at the panel's edge.
      { class: 'report', id: 'fault-table', style: 'table-layout:fixed;width:100%;overflow-wrap:anywhere' },
      el(
        'thead',
        {},
        el(
          'tr',
          {},
          el('th', { scope: 'col' }, 'Fault'),
          el('th', { scope: 'col' }, 'Kind'),
          el('th', { scope: 'col' }, 'Dip'),
          el('th', { scope: 'col' }, 'Length (km)'),
          ...reportCols.map((c) => el('th', { scope: 'col' }, c.label)),
        ),
      ),
      el('tbody', {}, ...faultRows),
    );
    const parts: (HTMLElement | null)[] = [
      el('h3', {}, 'Faults'),
      faultRows.length > 0 ? el('div', { class: 'table-scroll' }, faultTable) : el('p', { class: 'empty' }, 'No faults in the data.'),
      el('p', { class: 'note', id: 'fault-selection', 'aria-live': 'polite' }),
    ];
    // Each reported fault: its zone statements (with the samples behind them) and its separations.
    const details = this.report.filter((r) => Array.isArray(r.separations) || Array.isArray(r.repeatedZones)).map((r) => faultDetails(r));
    if (details.length > 0) parts.push(el('div', { id: 'fault-details' }, ...details));
    parts.push(el('h3', {}, 'Isograds'));
    if (this.isogradSummary.length > 0) {
      const band = (r: IsogradSummary) => {
        const b = r.bandWidthKm;
        return b ? `${fmt(b.median, 1)} (${fmt(b.p10, 1)}–${fmt(b.p90, 1)})` : '—';
      };
      const against = (r: IsogradSummary) => {
        const d = r.disagreeing;
        if (d.length === 0) return '—';
        return (
          d
            .slice(0, 8)
            .map((q) => `${q.id} (${q.says}, P ${fmt(q.probability, 2)})`)
            .join(', ') + (d.length > 8 ? `, … ${d.length - 8} more` : '')
        );
      };
      const rows = this.isogradSummary.map((r) =>
        el(
          'tr',
          {},
          el('td', {}, `${r.mineral}-in`),
          el('td', { class: 'num' }, formatCell(r.lengthKm)),
          el('td', { class: 'num' }, band(r)),
          el('td', { class: 'num' }, `${formatCell(r.samplesAbove)} / ${formatCell(r.samplesBelow)}`),
          el('td', { class: 'wrap' }, against(r)),
        ),
      );
      parts.push(
        el(
          'div',
          { class: 'table-scroll' },
          el(
            'table',
            { class: 'report', id: 'isograd-table', style: 'table-layout:fixed;width:100%;overflow-wrap:anywhere' },
            el(
              'thead',
              {},
              el(
                'tr',
                {},
                el('th', { scope: 'col' }, 'Isograd'),
                el('th', { scope: 'col' }, 'Length (km)'),
                el('th', { scope: 'col', title: 'Width of the 0.1–0.9 probability band along the isograd: median (10th–90th percentile)' }, 'Band width (km)'),
                el('th', { scope: 'col' }, 'Samples above / below'),
                el(
                  'th',
                  {
                    scope: 'col',
                    title: 'Samples on the other side of the isograd from what they record, with their leave-one-out probability of lying at or above it',
                  },
                  'Disagreeing samples',
                ),
              ),
            ),
            el('tbody', {}, ...rows),
          ),
        ),
      );
      parts.push(
        el(
          'p',
          { class: 'note' },
          'Each isograd is drawn with fainter lines where the probability of lying at or above it is 0.1 and 0.9: the band where it may lie.',
        ),
      );
    } else if (this.isograds === null) parts.push(el('p', { class: 'empty' }, 'Isograds are drawn from the samples by a run: none yet.'));
    else {
      const rows = this.isograds.features.map((f) => {
        const p = f.properties ?? {};
        return el(
          'tr',
          {},
          el('td', {}, String(p.mineral ?? p.zone ?? '—')),
          el('td', { class: 'num' }, formatCell(p.rank)),
          el('td', {}, String(p.highSide ?? '—')),
          el('td', { class: 'num' }, fmt(lengthKm(lines(f.geometry)), 1)),
        );
      });
      parts.push(
        el(
          'table',
          { class: 'report', id: 'isograd-table' },
          el(
            'thead',
            {},
            el(
              'tr',
              {},
              el('th', { scope: 'col' }, 'Mineral in'),
              el('th', { scope: 'col' }, 'Rank'),
              el('th', { scope: 'col' }, 'High side'),
              el('th', { scope: 'col' }, 'Length (km)'),
            ),
          ),
          el('tbody', {}, ...rows),
        ),
      );
    }
    if (this.sampleGrades.length > 0) parts.push(sampleGradeList(this.sampleGrades));
    replace(this.root, ...parts);
    if (this.selected !== null) this.select(this.selected);
  }
}

/** Each sample's grade (zone, and whether it came from the zone given, the facies or the peak P–T), folded. */
function sampleGradeList(grades: SampleGrade[]): HTMLElement {
  const rows = grades.map((g) =>
    el(
      'tr',
      { 'data-sample': g.id },
      el('td', {}, g.id),
      el('td', {}, g.zone ?? '—'),
      el('td', {}, GRADE_SOURCE[g.source] ?? g.source),
      el('td', {}, g.series ?? '—'),
    ),
  );
  const counts = (['zone', 'facies', 'peak-pt', 'none'] as const)
    .map((k) => [k, grades.filter((g) => g.source === k).length] as const)
    .filter(([, n]) => n > 0);
  return el(
    'details',
    { id: 'sample-grades' },
    el('summary', {}, `Grade of each sample (${grades.length}: ${counts.map(([k, n]) => `${n} from ${GRADE_SOURCE[k]}`).join(', ')})`),
    el(
      'div',
      { class: 'table-scroll', style: 'max-height:320px;overflow-y:auto' },
      el(
        'table',
        { class: 'report', id: 'sample-grade-table', style: 'table-layout:fixed;width:100%;overflow-wrap:anywhere' },
        el(
          'thead',
          {},
          el(
            'tr',
            {},
            el('th', { scope: 'col' }, 'Sample'),
            el('th', { scope: 'col' }, 'Zone'),
            el('th', { scope: 'col', title: 'The zone recorded, or derived from the facies or from the peak temperature and pressure' }, 'From'),
            el('th', { scope: 'col', title: 'Pressure series from the aluminosilicate field (low pressure: andalusite-bearing)' }, 'Series'),
          ),
        ),
        el('tbody', {}, ...rows),
      ),
    ),
  );
}

type SepRow = {
  isograd: string;
  end: string;
  separationKm: { value: number; low: number; high: number };
  sense: string;
  displacedTowardHigherGrade?: string;
  dipSlipKm?: { value: number; low: number; high: number };
  slipSense?: string;
};

/** One fault's statements and separations, laid out to fit the panel's width. */
function faultDetails(r: FaultReportRow): HTMLElement {
  const items: HTMLElement[] = [];
  const samples = (ids: unknown) =>
    Array.isArray(ids) && ids.length > 0 ? ` — samples ${ids.slice(0, 6).join(', ')}${ids.length > 6 ? `, … ${ids.length - 6} more` : ''}` : '';
  for (const z of (r.repeatedZones as { zone: string; sampleIds: string[] }[] | undefined) ?? [])
    items.push(el('li', {}, `Repeated: ${z.zone}${samples(z.sampleIds)}`));
  for (const z of (r.missingZones as { zone: string; side?: string; higherSide?: string; between?: string[]; sampleIds: string[] }[] | undefined) ?? []) {
    const where = z.between && z.side && z.higherSide ? ` (${z.between[0]} on the ${z.side} faces ${z.between[1]} on the ${z.higherSide})` : '';
    items.push(el('li', {}, `Missing: ${z.zone}${where}${samples(z.sampleIds)}`));
  }
  for (const n of (r.notReached as { isograd: string; sideName: string }[] | undefined) ?? [])
    items.push(el('li', {}, `${n.isograd} does not reach ${n.sideName === 'either side' ? 'either side' : `the ${n.sideName}`}`));
  if (r.offsetOnly === true) items.push(el('li', {}, 'Offset only: no zone missing or repeated'));
  const seps = (r.separations as SepRow[] | undefined) ?? [];
  const range = (x: { value: number; low: number; high: number }) => `${fmt(x.value, 1)} (${fmt(x.low, 1)}–${fmt(x.high, 1)})`;
  const sepTable =
    seps.length === 0
      ? el('p', { class: 'empty' }, 'No isograd meets this fault on both sides.')
      : el(
          'table',
          { class: 'report separations', style: 'table-layout:fixed;width:100%;overflow-wrap:anywhere' },
          el(
            'thead',
            {},
            el(
              'tr',
              {},
              el('th', { scope: 'col' }, 'Isograd'),
              el('th', { scope: 'col' }, 'End'),
              el(
                'th',
                { scope: 'col', title: "Apparent separation along the trace, with the range from the isograd's 0.1–0.9 probability band" },
                'Separation (km)',
              ),
              el('th', { scope: 'col' }, 'Sense'),
              el(
                'th',
                { scope: 'col', title: "Dip-slip component for pure dip slip, d = s·tan r (r: pitch of the isograd's cutoff on the fault plane)" },
                'Dip slip (km)',
              ),
            ),
          ),
          el(
            'tbody',
            {},
            ...seps.map((x) =>
              el(
                'tr',
                {},
                el('td', {}, x.isograd),
                el('td', {}, x.end),
                el('td', { class: 'num' }, range(x.separationKm)),
                el('td', {}, `${x.sense}${x.displacedTowardHigherGrade ? `; up-grade: ${x.displacedTowardHigherGrade}` : ''}`),
                el('td', { class: 'num' }, x.dipSlipKm ? `${range(x.dipSlipKm)} ${x.slipSense ?? ''}` : '—'),
              ),
            ),
          ),
        );
  const warnings = Array.isArray(r.warnings) ? (r.warnings as string[]) : [];
  return el(
    'section',
    { class: 'fault-detail', 'data-fault-detail': String(r.id) },
    el('h4', {}, `${String(r.name ?? r.id)}${r.kind ? ` (${String(r.kind)})` : ''}`),
    items.length > 0 ? el('ul', {}, ...items) : el('p', { class: 'empty' }, 'No zone statement: too few samples beside the trace.'),
    el('div', { class: 'table-scroll' }, sepTable),
    ...warnings.map((w) => el('p', { class: 'note' }, w)),
  );
}

function formatCell(v: unknown): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'number') return Number.isFinite(v) ? String(Math.round(v * 100) / 100) : '—';
  if (typeof v === 'string' || typeof v === 'boolean') return String(v);
  if (Array.isArray(v)) return v.map(formatCell).join(', ');
  return JSON.stringify(v);
}
