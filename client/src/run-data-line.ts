/** The run panel's line naming what a run uses: its data sets by kind and name (ids in tooltips) and its model. */
import { el } from './dom.ts';
import type { RunParams } from './state.ts';

/** The name of a data set by id (kind and name), when the page knows it. */
export type DatasetNameOf = (id: string) => { kind: string; name: string } | undefined;

/** "Data: heat-flow sites “…”, faults “…”; model “…” (the Model tab's, loaded from the data set “…”)." */
export function runDataLine(p: RunParams, model: { name?: unknown } | null, nameOf?: DatasetNameOf): (Node | string)[] {
  const named = (kind: string, id: string) =>
    el('span', { class: 'dataset-ref', title: `data set ${id}`, 'data-dataset': id }, `${kind} “${nameOf?.(id)?.name ?? id}”`);
  const parts: HTMLElement[] = [];
  if (p.sites) parts.push(named('heat-flow sites', p.sites));
  if (p.samples) parts.push(named('grade samples', p.samples));
  if (p.faults) parts.push(named('faults', p.faults));
  if (p.driftGrid) parts.push(named('drift grid', p.driftGrid));
  const modelName = model && typeof model.name === 'string' && model.name !== '' ? model.name : 'unnamed';
  const from = p.modelDataset ? nameOf?.(p.modelDataset) : undefined;
  const modelRef = el('span', { class: 'model-ref', ...(p.modelDataset ? { title: `loaded from data set ${p.modelDataset}` } : {}) }, `model “${modelName}”`);
  const fromText = from ? ` (the Model tab's, loaded from the data set “${from.name}”)` : " (the Model tab's)";
  return ['Data: ', ...parts.flatMap((x, i) => (i === 0 ? [x] : [', ', x])), parts.length > 0 ? '; ' : '', modelRef, `${fromText}.`];
}
