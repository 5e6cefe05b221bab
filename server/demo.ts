import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseFeatureCollection, type DatasetKind } from '../shared/schema/features.ts';
import type { Store } from './store/types.ts';
import { modelFromJson } from './runs/model-input.ts';

export const FIXTURES_DIR = new URL('../fixtures/', import.meta.url).pathname;
export const DEMO_DIR = join(FIXTURES_DIR, 'demo');

/** The demo region's data sets and their stable ids (DESIGN.md §5). */
export const DEMO_DATASETS: { id: string; kind: DatasetKind | 'model'; file: string; title: string }[] = [
  { id: 'demo-sites', kind: 'sites', file: 'sites.geojson', title: 'Orrindel Massif heat-flow sites (invented)' },
  { id: 'demo-samples', kind: 'samples', file: 'samples.geojson', title: 'Orrindel Massif grade samples (invented)' },
  { id: 'demo-faults', kind: 'faults', file: 'faults.geojson', title: 'Orrindel Massif faults (invented)' },
  { id: 'demo-wells', kind: 'wells', file: 'wells.geojson', title: 'Orrindel Massif wells (invented)' },
  { id: 'demo-outline', kind: 'regions', file: 'outline.geojson', title: 'Orrindel Massif coastline (invented)' },
  { id: 'demo-model', kind: 'model', file: 'model.json', title: 'Orrindel Massif crustal model (invented)' },
];

export const DEMO_TERRAIN = join(DEMO_DIR, 'terrain.tif');

/** Loads the demo data sets into the store under their stable ids (kept if already there). Validates each one. */
export function loadDemo(store: Store): void {
  for (const d of DEMO_DATASETS) {
    if (store.getDataset(d.id)) continue;
    const text = readFileSync(join(DEMO_DIR, d.file), 'utf8');
    const json = JSON.parse(text) as unknown;
    if (d.kind === 'model') {
      // Validated like an uploaded model; its top-level `name` is a label, kept as the title.
      const { model, name } = modelFromJson(json, d.file);
      store.putDataset({ id: d.id, kind: 'model', body: JSON.stringify(model), featureCount: model.layers.length, title: name ?? d.title });
      continue;
    }
    const parsed = parseFeatureCollection(d.kind, json);
    const body = JSON.stringify({ ...parsed.collection, description: (json as { description?: string }).description });
    store.putDataset({ id: d.id, kind: d.kind, body, featureCount: parsed.collection.features.length, title: d.title });
  }
}
