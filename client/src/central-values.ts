/**
 * A run's central values (the summary's `monteCarlo.centralValues`): per map — each isotherm's depth, the
 * temperature at each depth — the grid average of the mean of the realizations, which is the central value, and of
 * their P50, beside the deterministic (kriged) map's and the mean's difference from it.
 */
import type { RunSummary } from '../../shared/schema/run.ts';
import { summaryProductName } from '../../shared/products/names.ts';
import { el, fmt } from './dom.ts';

type CentralValue = NonNullable<NonNullable<RunSummary['monteCarlo']>['centralValues']>[number];

/** A difference with its sign always written. */
const signed = (v: number | null, digits: number) => (v === null ? '—' : `${v > 0 ? '+' : v < 0 ? '−' : ''}${fmt(Math.abs(v), digits)}`);

/** The table of central values (null when the run has none: no realizations, or a run stored before they were kept). */
export function centralValuesTable(mc: RunSummary['monteCarlo']): HTMLElement | null {
  const rows = mc?.centralValues ?? [];
  if (rows.length === 0) return null;
  const digits = (units: string) => (units === 'km' ? 2 : 1);
  const head = el('tr', {}, ...['Map', 'Mean', 'P50', 'Deterministic', 'Mean − det.'].map((h) => el('th', { scope: 'col' }, h)));
  const body = rows.map((c: CentralValue) =>
    el(
      'tr',
      { 'data-product': c.product },
      el('th', { scope: 'row' }, c.product, el('span', { class: 'unit' }, `${c.units}, grid average`)),
      el('td', { class: 'num', 'data-col': 'mean' }, fmt(c.mean, digits(c.units))),
      el('td', { class: 'num', 'data-col': 'p50' }, fmt(c.p50, digits(c.units))),
      el('td', { class: 'num', 'data-col': 'deterministic' }, fmt(c.deterministic, digits(c.units))),
      el('td', { class: 'num', 'data-col': 'difference' }, signed(c.difference, digits(c.units))),
    ),
  );
  // An isotherm's depth has a layer giving, per cell, the share of the realizations reaching it (names.ts).
  const undefinedCells = rows
    .filter((c) => c.cellsMeanUndefined > 0)
    .map(
      (c) =>
        `${c.product}: ${c.cellsMeanUndefined} cells${c.product.startsWith('depth-') ? ` (share reaching it: ${summaryProductName(c.product, 'reached')})` : ''}`,
    );
  const ex = mc!.heatFlowExhausted;
  return el(
    'div',
    { id: 'run-central-values' },
    el(
      'p',
      { class: 'note' },
      `Central values from ${mc!.realizations} realizations: the mean of the realizations leads; the deterministic (kriged) map is shown beside it with the mean's difference from it.`,
    ),
    el('div', { class: 'table-scroll' }, el('table', { class: 'report', id: 'central-values' }, el('thead', {}, head), el('tbody', {}, ...body))),
    undefinedCells.length > 0
      ? el(
          'p',
          { class: 'note', id: 'central-values-undefined' },
          `Cells without a mean (some realization does not reach the isotherm above the maximum depth, or lies past the melt onset at that depth): ${undefinedCells.join('; ')}. ` +
            `The averages run over the cells where the mean, the P50 and the deterministic map are all defined: ${rows.map((c) => `${c.product} ${c.cells}`).join(', ')}.`,
        )
      : null,
    ex !== undefined && ex.cellRealizations > 0
      ? el(
          'p',
          { class: 'note', id: 'central-values-exhausted' },
          `In ${ex.cells} cells, ${ex.cellRealizations} realizations in all have a heat flow that runs out above the maximum depth: their temperature peaks where it does, so they count as not reaching any hotter isotherm.`,
        )
      : null,
  );
}
