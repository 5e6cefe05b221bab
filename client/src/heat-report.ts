/**
 * A heat-in-place report as the page shows it: the part of the CLI's `heat-in-place --json` answer it reads, the
 * totals table (the mean of the realizations first, then P50, P10–P90 and the deterministic run with the mean's
 * difference from it; each total's unit under its name), the totals in words, the exceedance
 * reading, the warnings, the downloads (HTML report and CSV) and the caution.
 */
import { CAUTION } from '../../shared/caution.ts';
import { EXCEEDANCE_READING } from '../../shared/resource/assess.ts';
import type { AreaTotals, TotalValue } from '../../shared/resource/totals.ts';
import { el } from './dom.ts';

/** One total of the report (the deterministic value and the Monte Carlo percentiles), as shared/resource computes it. */
export type { TotalValue };

/** The part of the CLI's `heat-in-place --json` report the panel shows: the area totals of shared/resource/totals.ts and the report's frame. */
export type HeatReport = Pick<
  AreaTotals,
  | 'cells'
  | 'areaKm2'
  | 'heatInPlaceEJ'
  | 'recoverableJ'
  | 'thermalMWt'
  | 'electricMWe'
  | 'electricMWeConversion'
  | 'hotAreaKm2'
  | 'hotVolumeKm3'
  | 'meanReservoirTempC'
> & {
  area: 'polygon' | 'grid';
  totals: { polygon: { polygonAreaKm2: number; label: string | null } | null };
  monteCarlo: { realizations: number; accepted: number; rejected: number; seed: number } | null;
  warnings: string[];
  caution: string;
};

/** Where the job's report can be downloaded. */
export interface ReportLinks {
  json: string;
  html: string;
  csv: string;
}

/** A value with about three significant figures and thin grouping, "—" when missing. */
export function sig(v: number | null | undefined): string {
  if (typeof v !== 'number' || !Number.isFinite(v)) return '—';
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1000) return Math.round(v).toLocaleString('en-US');
  return String(Number(v.toPrecision(3)));
}

/** The rows of the totals table: label, unit, how to read the total (scale from the report's own unit). */
const ROWS: { key: keyof HeatReport; label: string; unit: string; scale: number }[] = [
  { key: 'heatInPlaceEJ', label: 'Heat in place', unit: 'EJ', scale: 1 },
  { key: 'recoverableJ', label: 'Recoverable heat', unit: 'EJ', scale: 1e-18 },
  { key: 'thermalMWt', label: 'Thermal power over the plant life', unit: 'MWt', scale: 1 },
  { key: 'electricMWe', label: 'Electric power (available work)', unit: 'MWe', scale: 1 },
  { key: 'electricMWeConversion', label: 'Electric power (conversion efficiency)', unit: 'MWe', scale: 1 },
  { key: 'hotAreaKm2', label: 'Area of rock ≥ minimum temperature', unit: 'km²', scale: 1 },
  { key: 'hotVolumeKm3', label: 'Volume of that rock', unit: 'km³', scale: 1 },
  { key: 'meanReservoirTempC', label: 'Its mean temperature', unit: '°C', scale: 1 },
];

/** A signed difference with its sign always written (+12, −3.4, 0). */
function signed(v: number): string {
  return v > 0 ? `+${sig(v)}` : v < 0 ? `−${sig(-v)}` : '0';
}

/**
 * The totals table: one row per total (its unit under its name, so that four number columns fit the panel at
 * 1440 × 900). With realizations it leads with the central value, the mean of the realizations (the deterministic
 * kriged run and the mean's difference from it written under it), then their P10, P50 and P90; without, the
 * deterministic value alone.
 */
function totalsTable(r: HeatReport): HTMLElement {
  const mc = r.monteCarlo !== null;
  const cols = mc ? ['Total', 'Mean', 'P10', 'P50', 'P90'] : ['Total', 'Deterministic'];
  const head = el('tr', {}, ...cols.map((h) => el('th', { scope: 'col' }, h)));
  const rows = ROWS.filter((row) => {
    const t = r[row.key] as TotalValue | undefined;
    return t !== undefined && (t.nominal !== null || t.mean !== null);
  }).map((row) => {
    const t = r[row.key] as TotalValue;
    const s = (v: number | null) => (v === null ? '—' : sig(v * row.scale));
    if (!mc)
      return el(
        'tr',
        { 'data-total': String(row.key) },
        el('th', { scope: 'row' }, row.label, el('span', { class: 'unit' }, row.unit)),
        el('td', { class: 'num', 'data-col': 'deterministic' }, s(t.nominal)),
      );
    // Under the mean: the deterministic (kriged) run and the mean's difference from it, so that four number
    // columns still fit the panel at 1440 × 900.
    const mean = el(
      'td',
      { class: 'num', 'data-col': 'mean', title: 'Mean of the realizations; below it the deterministic (kriged) run and the mean minus it' },
      s(t.mean),
      el('span', { class: 'unit', 'data-col': 'deterministic' }, `det. ${s(t.nominal)}`),
    );
    if (t.meanMinusNominal !== null) mean.append(el('span', { class: 'unit', 'data-col': 'difference' }, `mean ${signed(t.meanMinusNominal * row.scale)}`));
    return el(
      'tr',
      { 'data-total': String(row.key) },
      el('th', { scope: 'row' }, row.label, el('span', { class: 'unit' }, row.unit)),
      mean,
      el('td', { class: 'num', 'data-col': 'p10' }, s(t.p10)),
      el('td', { class: 'num', 'data-col': 'p50' }, s(t.p50)),
      el('td', { class: 'num', 'data-col': 'p90' }, s(t.p90)),
    );
  });
  return el('div', { class: 'table-scroll' }, el('table', { class: 'report hip-totals', id: 'hip-totals' }, el('thead', {}, head), el('tbody', {}, ...rows)));
}

/**
 * The totals in words. With realizations: the mean of the realizations first (the central value), their P50 and
 * P10–P90, then the deterministic run, labelled, with the mean's difference from it. Without: the deterministic
 * value alone.
 */
export function headline(r: HeatReport): string {
  const h = r.heatInPlaceEJ,
    e = r.electricMWe;
  const where =
    r.area === 'polygon'
      ? `Inside the area (${sig(r.totals.polygon?.polygonAreaKm2 ?? r.areaKm2)} km², ${r.cells} cells)`
      : `Over the run's grid (${sig(r.areaKm2)} km², ${r.cells} cells)`;
  if (h.mean !== null && r.monteCarlo) {
    const diff = h.meanMinusNominal === null ? '' : `; the mean is ${signed(h.meanMinusNominal)} EJ from it`;
    return (
      `${where}: heat in place ${sig(h.mean)} EJ, the mean of ${r.monteCarlo.accepted} realizations (P50 ${sig(h.p50)}; P10 ${sig(h.p10)}, P90 ${sig(h.p90)} EJ), ` +
      `electric power ${sig(e.mean)} MWe (mean; P50 ${sig(e.p50)}; P10 ${sig(e.p10)}, P90 ${sig(e.p90)} MWe). ` +
      `Deterministic (kriged) run: ${sig(h.nominal)} EJ, ${sig(e.nominal)} MWe${diff}.`
    );
  }
  return `${where}: heat in place ${sig(h.nominal)} EJ, electric power ${sig(e.nominal)} MWe (deterministic run only: ask for realizations to get the mean and P10–P90).`;
}

/** The report as the panel shows it: headline, table, exceedance reading, warnings, downloads, caution. */
export function reportView(r: HeatReport, links: ReportLinks): HTMLElement {
  return el(
    'div',
    { class: 'hip-report', id: 'hip-report' },
    el('p', { class: 'hip-headline', id: 'hip-headline' }, headline(r)),
    totalsTable(r),
    r.monteCarlo ? el('p', { class: 'note', id: 'hip-exceedance' }, `${EXCEEDANCE_READING}.`) : null,
    ...r.warnings.map((w) => el('p', { class: 'note warning' }, w)),
    el(
      'p',
      { class: 'hip-links' },
      el('a', { href: links.html, target: '_blank', rel: 'noopener', id: 'hip-html' }, 'Printable report (HTML)'),
      ' · ',
      el('a', { href: links.csv, download: '', id: 'hip-csv' }, 'Totals (CSV)'),
    ),
    el('p', { class: 'note caution-note', id: 'hip-caution' }, r.caution || CAUTION),
  );
}
