/**
 * The text answer of `subtherm heat-in-place` (without --json): the totals with the mean of the realizations as the
 * central value, P10/P50/P90, the deterministic (nominal) value beside them and their difference, then the method
 * notes, the zones, the warnings, the files written and the caution.
 */
import { CAUTION } from '../../shared/caution.ts';
import type { HeatInPlaceReport } from '../../shared/resource/index.ts';
import type { TotalValue } from '../../shared/resource/totals.ts';

function f(v: number | null, digits = 4): string {
  return v === null ? '—' : Math.abs(v) >= 1e6 || (Math.abs(v) < 1e-2 && v !== 0) ? v.toExponential(3) : v.toPrecision(digits);
}

export function renderText(r: HeatInPlaceReport, files: Record<string, string>): string {
  // The central value is the mean of the realizations; the deterministic (nominal) run stands beside it.
  const mc = r.monteCarlo !== null;
  const cols = (t: TotalValue) => (mc ? [t.mean, t.p10, t.p50, t.p90, t.nominal, t.meanMinusNominal] : [t.nominal]).map((v) => f(v).padStart(11)).join(' ');
  const row = (label: string, t: TotalValue) => `  ${label.padEnd(44)} ${cols(t)}`;
  const head = (mc ? ['mean', 'P10', 'P50', 'P90', 'determin.', 'mean − det.'] : ['determin.']).map((h) => h.padStart(11)).join(' ');
  const lines = [
    `Heat in place (${r.area === 'polygon' ? 'polygon' : 'whole grid'}): ${f(r.areaKm2)} km², ${r.cells} cells`,
    `  ${''.padEnd(44)} ${head}`,
    row('heat in place (EJ)', r.heatInPlaceEJ),
    row('recoverable heat (J)', r.recoverableJ),
    row('thermal power, recoverable / life (MWt)', r.thermalMWt),
    row('electric, exergy route (MWe)', r.electricMWe),
  ];
  if ((r.inputs as { conversionEfficiency: unknown }).conversionEfficiency !== null)
    lines.push(row('electric, thermal × conversion (MWe)', r.electricMWeConversion));
  lines.push(
    row('mean reservoir temperature (°C)', r.meanReservoirTempC),
    '',
    `Route: ${r.method.routeLabel as string}`,
    String(r.method.percentiles),
    String(r.method.exceedance),
    String(r.method.centralValue),
  );
  for (const z of r.totals.zones ?? [])
    lines.push(
      mc
        ? `  zone ${z.zone}: ${f(z.areaKm2)} km², heat ${f(z.heatInPlaceEJ.mean)} EJ, electric ${f(z.electricMWe.mean)} MWe (mean of the realizations; deterministic ${f(z.heatInPlaceEJ.nominal)} EJ, ${f(z.electricMWe.nominal)} MWe)`
        : `  zone ${z.zone}: ${f(z.areaKm2)} km², heat ${f(z.heatInPlaceEJ.nominal)} EJ, electric ${f(z.electricMWe.nominal)} MWe (deterministic)`,
    );
  if (r.warnings.length) lines.push('', 'Warnings:', ...r.warnings.map((w) => `  - ${w}`));
  for (const [k, p] of Object.entries(files)) lines.push(`wrote ${k}: ${p}`);
  lines.push('', CAUTION, '');
  return lines.join('\n');
}
