/**
 * The structure panel's tables: faults (with the run's fault report columns: the grade jump across each fault and
 * its higher-grade side), each reported fault's details (zones repeated or missing, isograd separations), the
 * isograds (the run's summary with band widths and disagreeing samples, or the lines of the isograd layer), and each
 * sample's grade.
 */
import { el, fmt, reportTable, type Column } from './dom.ts';
import type { IsogradSummary } from '../../shared/structure/layer.ts';
import { excursionWarningLead } from '../../shared/structure/fault-types.ts';
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
 * null when there are no faults. Its columns share the panel's width, long words wrapping: no column is cut.
 */
export function faultTable(faults: FeatureCollection, report: FaultReportRow[], onSelect: (id: string) => void): HTMLElement | null {
  type Row = { f: FeatureCollection['features'][number]; id: string; r: FaultReportRow | undefined };
  const rows: Row[] = faults.features.map((f) => {
    const id = String(f.properties?.id ?? f.id ?? '');
    return { f, id, r: report.find((x) => String(x.id) === id || String(x.faultId) === id) };
  });
  const nameButton = ({ f, id }: Row) => {
    const btn = el('button', { type: 'button', class: 'rowbtn', 'aria-pressed': 'false' }, String(f.properties?.name ?? id));
    btn.addEventListener('click', () => onSelect(id));
    return btn;
  };
  const columns: Column<Row>[] = [
    { label: 'Fault', width: '24%', cell: nameButton },
    { label: 'Kind', width: '18%', cell: ({ f }) => String(f.properties?.kind ?? 'unknown') },
    { label: 'Dip', width: '9%', num: true, cell: ({ f }) => (typeof f.properties?.dipDeg === 'number' ? `${f.properties.dipDeg}°` : '—') },
    { label: 'Length (km)', width: '13%', num: true, cell: ({ f }) => fmt(lengthKm(lines(f.geometry)), 1) },
  ];
  // The run's fault report columns (shared/structure/fault-report.ts): the grade jump across the fault and the
  // higher-grade side; zones missing on one side and separations are in each fault's details.
  if (report.length > 0)
    columns.push(
      { label: 'Grade jump (zones)', width: '15%', num: true, cell: ({ r }) => (r ? formatCell(r.gradeJump) : '—') },
      { label: 'Higher grade', cell: ({ r }) => (r ? formatCell(r.higherWall ?? r.higherSide) : '—') },
    );
  return rows.length > 0 ? reportTable({ id: 'fault-table' }, columns, rows, ({ id }) => ({ 'data-fault': id })) : null;
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
  const columns: Column<IsogradSummary>[] = [
    { label: 'Isograd', width: '18%', cell: (r) => `${r.mineral}-in` },
    { label: 'Length (km)', width: '15%', num: true, cell: (r) => formatCell(r.lengthKm) },
    {
      label: 'Band width (km)',
      title: 'Width of the 0.1–0.9 probability band along the isograd: median (10th–90th percentile)',
      width: '20%',
      num: true,
      cell: band,
    },
    { label: 'Samples above / below', width: '17%', num: true, cell: (r) => `${formatCell(r.samplesAbove)} / ${formatCell(r.samplesBelow)}` },
    {
      label: 'Disagreeing samples',
      title: 'Samples on the other side of the isograd from what they record, with their leave-one-out probability of lying at or above it',
      cell: against,
    },
  ];
  parts.push(reportTable({ id: 'isograd-table' }, columns, summary));
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
  type Row = FeatureCollection['features'][number];
  const columns: Column<Row>[] = [
    { label: 'Mineral in', cell: (f) => String(f.properties?.mineral ?? f.properties?.zone ?? '—') },
    { label: 'Rank', num: true, cell: (f) => formatCell(f.properties?.rank) },
    { label: 'High side', cell: (f) => String(f.properties?.highSide ?? '—') },
    { label: 'Length (km)', num: true, cell: (f) => fmt(lengthKm(lines(f.geometry)), 1) },
  ];
  return reportTable({ id: 'isograd-table' }, columns, isograds.features);
}

/** Each sample's grade (zone, and whether it came from the zone given, the facies or the peak P–T), folded. */
export function sampleGradeList(grades: SampleGrade[]): HTMLElement {
  const columns: Column<SampleGrade>[] = [
    { label: 'Sample', cell: (g) => g.id },
    { label: 'Zone', cell: (g) => g.zone ?? '—' },
    {
      label: 'From',
      title: 'The zone recorded, or derived from the facies or from the peak temperature and pressure',
      cell: (g) => GRADE_SOURCE[g.source] ?? g.source,
    },
    { label: 'Series', title: 'Pressure series from the aluminosilicate field (low pressure: andalusite-bearing)', cell: (g) => g.series ?? '—' },
  ];
  const table = reportTable({ id: 'sample-grade-table' }, columns, grades, (g) => ({ 'data-sample': g.id }));
  table.classList.add('tall');
  const counts = (['zone', 'facies', 'peak-pt', 'none'] as const)
    .map((k) => [k, grades.filter((g) => g.source === k).length] as const)
    .filter(([, n]) => n > 0);
  return el(
    'details',
    { id: 'sample-grades' },
    el('summary', {}, `Grade of each sample (${grades.length}: ${counts.map(([k, n]) => `${n} from ${GRADE_SOURCE[k]}`).join(', ')})`),
    table,
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

/** A crossing pair set aside (shared/structure/fault-types.ts DroppedExcursion, as the run summary gives it). */
type DroppedRow = { isograd: string; side: string; fromKm: number; toKm: number; sampleIds: string[] };

/** One line for a fault's crossings set aside: how many, and for each pair the samples causing it, isograd, side and place. */
function setAsideLine(dropped: DroppedRow[], sideName: (e: DroppedRow) => string): HTMLElement {
  const pairs = dropped.map((e) => `${e.sampleIds.join(', ')}: ${e.isograd} on the ${sideName(e)}, ${fmt(e.fromKm, 1)}–${fmt(e.toKm, 1)} km along the trace`);
  return el(
    'li',
    {
      class: 'set-aside',
      title:
        "Two opposite crossings of one side's isograd profile, caused only by samples that leave-one-out contradicts: not counted as meetings of the isograd with the fault",
    },
    `${2 * dropped.length} crossings set aside — ${pairs.join('; ')}`,
  );
}

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
  const setAside = (r.droppedExcursions as DroppedRow[] | undefined) ?? [];
  const sideName = (e: DroppedRow) => (r.sideNames as Record<string, string> | undefined)?.[e.side] ?? `${e.side} side`;
  if (setAside.length > 0) items.push(setAsideLine(setAside, sideName));
  const seps = (r.separations as SepRow[] | undefined) ?? [];
  const range = (x: KmRange) => `${fmt(x.value, 1)} (${fmt(x.low, 1)}–${x.high === null ? 'open' : fmt(x.high, 1)})`;
  const openReasons = [...new Set(seps.flatMap((x) => [x.separationKm, x.dipSlipKm]).flatMap((x) => (x?.high === null ? [x.openReason ?? 'open'] : [])))];
  const columns: Column<SepRow>[] = [
    { label: 'Isograd', width: '22%', cell: (x) => x.isograd },
    { label: 'End', width: '12%', cell: (x) => x.end },
    {
      label: 'Separation (km)',
      title: "Apparent separation along the trace, with the range from the isograd's 0.1–0.9 probability band",
      width: '20%',
      num: true,
      cell: (x) => range(x.separationKm),
    },
    { label: 'Sense', cell: (x) => `${x.sense}${x.displacedTowardHigherGrade ? `; up-grade: ${x.displacedTowardHigherGrade}` : ''}` },
    {
      label: 'Dip slip (km)',
      title: "Dip-slip component for pure dip slip, d = s·tan r (r: pitch of the isograd's cutoff on the fault plane)",
      width: '20%',
      num: true,
      cell: (x) => (x.dipSlipKm ? `${range(x.dipSlipKm)} ${x.slipSense ?? ''}` : '—'),
    },
  ];
  const sepTable =
    seps.length === 0 ? el('p', { class: 'empty' }, 'No isograd meets this fault on both sides.') : reportTable({ class: 'separations' }, columns, seps);
  // A dropped excursion's warning says at length what its set-aside line says.
  const warnings = (Array.isArray(r.warnings) ? (r.warnings as string[]) : []).filter(
    (w) => !setAside.some((e) => w.startsWith(excursionWarningLead(e.isograd, sideName(e)))),
  );
  return el(
    'section',
    { class: 'fault-detail', 'data-fault-detail': String(r.id) },
    el('h4', {}, `${String(r.name ?? r.id)}${r.kind ? ` (${String(r.kind)})` : ''}`),
    items.length > 0 ? el('ul', {}, ...items) : el('p', { class: 'empty' }, 'No zone statement: too few samples beside the trace.'),
    sepTable,
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
