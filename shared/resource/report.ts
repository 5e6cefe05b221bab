/**
 * Text exports of a heat-in-place report: CSV (a leading `# caution` comment line, then method lines, then one row
 * per area and quantity, the mean of the realizations first and the deterministic run last) and JSON (the report object itself, which already carries the caution and provenance).
 */
import { CAUTION } from '../caution.ts';
import { TOOL_NAME, VERSION } from '../version.ts';
import type { HeatInPlaceReport } from './assess.ts';
import type { AreaTotals, TotalValue } from './totals.ts';

const QUANTITIES: [keyof AreaTotals, string, string][] = [
  ['heatInPlaceJ', 'heat in place', 'J'],
  ['heatInPlaceEJ', 'heat in place', 'EJ'],
  ['recoverableJ', 'recoverable heat', 'J'],
  ['thermalMWt', 'thermal power (recoverable heat / life)', 'MWt'],
  ['electricMWe', 'electric power, available-work (exergy) route', 'MWe'],
  ['electricMWeConversion', 'electric power, thermal x conversion-efficiency route', 'MWe'],
  ['hotAreaKm2', 'area with rock at or above Tmin', 'km2'],
  ['hotVolumeKm3', 'volume of rock at or above Tmin', 'km3'],
  ['meanReservoirTempC', 'mean reservoir temperature', 'degC'],
  ['availableWorkFraction', 'available work / heat (W/Q)', '1'],
];

/** A CSV field, quoted when it holds a comma, quote or line break (RFC 4180). */
export function csvField(v: unknown): string {
  const s = v === null || v === undefined ? '' : String(v);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

const comment = (s: string) => `# ${s.replace(/[\r\n]+/g, ' ')}`;

/** The report as CSV text. */
export function reportCsv(r: HeatInPlaceReport): string {
  const lines = [
    comment(`caution: ${CAUTION}`),
    comment(`${TOOL_NAME} ${VERSION} heat in place; electric route: ${r.method.routeLabel as string}`),
    comment(r.method.percentiles as string),
    comment(r.method.exceedance as string),
    comment(r.method.noRealizations as string),
  ];
  lines.push(comment(r.method.centralValue as string));
  // The central value leads: the mean of the realizations, then P50, P10, P90 and sd; the deterministic run last.
  lines.push('area,quantity,units,cells,area_km2,mean,p50,p10,p90,sd,nominal,mean_minus_nominal');
  const areas: [string, AreaTotals][] = [['grid', r.totals.grid]];
  if (r.totals.polygon !== null) areas.push([`polygon${r.totals.polygon.label !== null ? `: ${r.totals.polygon.label}` : ''}`, r.totals.polygon]);
  for (const z of r.totals.zones ?? []) areas.push([`zone: ${z.zone}`, z]);
  for (const [name, t] of areas) {
    for (const [key, label, units] of QUANTITIES) {
      const v = t[key] as TotalValue;
      lines.push([name, label, units, t.cells, t.areaKm2, v.mean, v.p50, v.p10, v.p90, v.sd, v.nominal, v.meanMinusNominal].map(csvField).join(','));
    }
  }
  return lines.join('\n') + '\n';
}

/** The report as JSON text (one object). */
export function reportJson(r: HeatInPlaceReport): string {
  return JSON.stringify(r);
}
