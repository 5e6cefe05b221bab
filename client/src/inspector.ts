/**
 * The column inspector's summary under the plot: heat flow at the surface and at the base, the reduced heat flow,
 * the isotherm depths (with P10 / P50 / P90 when uncertain), the solidus crossings, the melt onset and the
 * lithosphere base, where the heat flow came from, and the answer's warnings.
 */
import { fmt, el } from './dom.ts';
import { bandOf, mid, type ColumnAnswer } from './column-answer.ts';

export type { ColumnAnswer, ColumnPoint } from './column-answer.ts';

/** The summary table under the plot: heat flow at the surface and at the base, isotherm depths, solidus. */
export function columnSummary(c: ColumnAnswer, heatFlowSource: string): HTMLElement {
  const rows: [string, string, string][] = [
    ['Surface heat flow', `${fmt(c.surfaceHeatFlowMWm2, 1)}${typeof c.heatFlowSdMWm2 === 'number' ? ` ± ${fmt(c.heatFlowSdMWm2, 1)}` : ''}`, 'mW/m²'],
    ['Heat flow at the base', fmt(mid(c.basalHeatFlowMWm2), 1), 'mW/m²'],
    ['Reduced heat flow', fmt(mid(c.reducedHeatFlowMWm2), 1), 'mW/m²'],
  ];
  for (const [t, v] of Object.entries(c.isothermDepthsKm)) {
    if (v !== null && typeof v === 'object') rows.push([`Depth to ${t} °C (P10 / P50 / P90)`, `${fmt(v.p10, 2)} / ${fmt(v.p50, 2)} / ${fmt(v.p90, 2)}`, 'km']);
    else rows.push([`Depth to ${t} °C`, v === null ? 'not reached' : fmt(v, 2), v === null ? '' : 'km']);
  }
  for (const [t, v] of Object.entries(bandOf(c)?.isothermDepthsKm ?? {})) {
    // A null percentile: the isotherm is not reached above the model's base in that share of realizations.
    const f = (x: number | null) => (x === null ? 'deeper' : fmt(x, 2));
    rows.push([`Depth to ${t} °C (P10 / P50 / P90)`, `${f(v.p10)} / ${f(v.p50)} / ${f(v.p90)}`, 'km']);
  }
  if (c.solidusCrossingKm) {
    // Rock-aware crossings: no temperature is shown below the melt onset.
    const w = mid(c.solidusCrossingKm.wetSolidus),
      m = mid(c.solidusCrossingKm.meltOnset);
    rows.push([
      `Water-saturated solidus reached at${c.wetSolidus ? ` (${c.wetSolidus.label}, ${c.wetSolidus.layer})` : ''}`,
      w === null ? 'not reached' : fmt(w, 1),
      w === null ? '' : 'km',
    ]);
    rows.push([
      `Melt onset, no temperature below${c.meltOnset ? ` (${c.meltOnset.label}, ${c.meltOnset.layer})` : ''}`,
      m === null ? 'not reached' : fmt(m, 1),
      m === null ? '' : 'km',
    ]);
    if (c.lithosphereBaseKm !== undefined)
      rows.push([
        'Lithosphere base (mantle adiabat below)',
        c.lithosphereBaseKm === null ? 'not reached' : fmt(c.lithosphereBaseKm, 1),
        c.lithosphereBaseKm === null ? '' : 'km',
      ]);
  }
  const table = el(
    'table',
    { class: 'kv', id: 'column-summary' },
    el('tbody', {}, ...rows.map(([k, v, u]) => el('tr', {}, el('th', { scope: 'row' }, k), el('td', { class: 'num' }, v), el('td', { class: 'unit' }, u)))),
  );
  const src = el('p', { class: 'note', id: 'column-source' }, `Heat flow from: ${heatFlowSource}`);
  const warn = (c.warnings ?? []).length > 0 ? el('ul', { class: 'warnings' }, ...(c.warnings ?? []).map((w) => el('li', {}, String(w)))) : null;
  const bandNote = bandOf(c)
    ? el('p', { class: 'note' }, `Shaded band: P10–P90 of ${bandOf(c)?.realizations ?? 'the'} realizations.`)
    : el('p', { class: 'note' }, 'No uncertainty band: the run has no realizations.');
  return el('div', {}, src, table, bandNote, warn);
}
