/**
 * The structure panel's tables: faults (with the run's fault report columns: the grade jump across each fault and
 * its higher-grade side), each reported fault's details (zones repeated or missing, isograd separations), the
 * isograds (the run's summary with band widths and disagreeing samples, or the lines of the isograd layer), and each
 * sample's grade.
 */
import { el, fmt } from './dom.ts';
import type { IsogradSummary } from '../../shared/structure/layer.ts';
import type { FaultReportRow, FeatureCollection, SampleGrade } from './structure.ts';

const KM_PER_DEG = 111.195; // mean Earth radius 6371.0088 km × π/180

/** How a sample's grade was found, in words. */
const GRADE_SOURCE: Record<SampleGrade['source'], string> = { zone: 'zone', facies: 'facies', 'peak-pt': 'peak P–T', none: 'none' };

/** The polylines of a line or multi-line geometry ([] for anything else). */
export function lines(g: FeatureCollection['features'][number]['geometry']): number[][][] {
  if (g?.type === 'LineString') return [g.coordinates as number[][]];
  if (g?.type === 'MultiLineString') return g.coordinates as number[][][];
  return [];
}

/** Length of polylines, km, in a local equirectangular frame per segment (adequate for traces of tens of km). */
function lengthKm(ls: number[][][]): number {
  let s = 0;
  for (const l of ls)
    for (let i = 1; i < l.length; i++) {
      const kx = KM_PER_DEG * Math.cos((l[i][1] * Math.PI) / 180);
      s += Math.hypot((l[i][0] - l[i - 1][0]) * kx, (l[i][1] - l[i - 1][1]) * KM_PER_DEG);
    }
  return s;
}

/**
 * The fault table: name (a button selecting the fault), kind, dip, length and, with a fault report, its columns;
 * null when there are no faults. Fixed layout over the panel's width, long words wrapping: no column is cut.
 */
export function faultTable(faults: FeatureCollection, report: FaultReportRow[], onSelect: (id: string) => void): HTMLElement | null {
  // The run's fault report columns (shared/structure/fault-report.ts): the grade jump across the fault and the
  // higher-grade side; zones missing on one side and separations are in each fault's details.
  const reportCols: { label: string; value: (r: FaultReportRow) => unknown }[] =
    report.length === 0
      ? []
      : [
          { label: 'Grade jump (zones)', value: (r) => r.gradeJump },
          { label: 'Higher grade', value: (r) => r.higherWall ?? r.higherSide },
        ];
  const faultRows = faults.features.map((f) => {
    const p = f.properties ?? {};
    const id = String(p.id ?? f.id ?? '');
    const r = report.find((x) => String(x.id) === id || String(x.faultId) === id);
    const btn = el('button', { type: 'button', class: 'rowbtn', 'aria-pressed': 'false' }, String(p.name ?? id));
    btn.addEventListener('click', () => onSelect(id));
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
  return faultRows.length > 0 ? el('div', { class: 'table-scroll' }, faultTable) : null;
}

/** The run's isograd summary: length, band width (median and 10th–90th percentile), samples each side, disagreeing samples. */
export function isogradSummaryTable(summary: IsogradSummary[]): HTMLElement[] {
  const parts: HTMLElement[] = [];
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
  const rows = summary.map((r) =>
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
  return parts;
}

/** The lines of the run's isograd layer (without a summary): mineral, rank, high side, length. */
export function isogradLineTable(isograds: FeatureCollection): HTMLElement {
  const rows = isograds.features.map((f) => {
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
  return el(
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
  );
}

/** Each sample's grade (zone, and whether it came from the zone given, the facies or the peak P–T), folded. */
export function sampleGradeList(grades: SampleGrade[]): HTMLElement {
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

/** A range, km; `high` null is an open upper bound, with its reason (shared/structure/fault-types.ts Range). */
type KmRange = { value: number; low: number; high: number | null; openReason?: string };
type SepRow = {
  isograd: string;
  end: string;
  separationKm: KmRange;
  sense: string;
  displacedTowardHigherGrade?: string;
  dipSlipKm?: KmRange;
  slipSense?: string;
};

/** One fault's statements and separations, laid out to fit the panel's width. */
export function faultDetails(r: FaultReportRow): HTMLElement {
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
  const range = (x: KmRange) => `${fmt(x.value, 1)} (${fmt(x.low, 1)}–${x.high === null ? 'open' : fmt(x.high, 1)})`;
  const openReasons = [...new Set(seps.flatMap((x) => [x.separationKm, x.dipSlipKm]).flatMap((x) => (x?.high === null ? [x.openReason ?? 'open'] : [])))];
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
    ...openReasons.map((why) => el('p', { class: 'note' }, `“open”: the range's upper bound lies ${why}; no number is given for it.`)),
    ...warnings.map((w) => el('p', { class: 'note' }, w)),
  );
}

export function formatCell(v: unknown): string {
  if (v === null || v === undefined) return '—';
  if (typeof v === 'number') return Number.isFinite(v) ? String(Math.round(v * 100) / 100) : '—';
  if (typeof v === 'string' || typeof v === 'boolean') return String(v);
  if (Array.isArray(v)) return v.map(formatCell).join(', ');
  return JSON.stringify(v);
}
