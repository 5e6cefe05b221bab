import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { parseFeatureCollection, type DatasetKind } from '../shared/schema/features.ts';
import type { Store } from './store/types.ts';
import type { Grid } from '../shared/grid/grid.ts';
import { parseModelDocument } from '../shared/products/model-input.ts';
import { hashToken, newEditToken } from './security.ts';

export const FIXTURES_DIR = new URL('../fixtures/', import.meta.url).pathname;
export const DEMO_DIR = join(FIXTURES_DIR, 'demo');

/** The demo region's data sets and their stable ids (DESIGN.md §5). */
export const DEMO_DATASETS: { id: string; kind: DatasetKind | 'model'; file: string; title: string }[] = [
  { id: 'demo-sites', kind: 'sites', file: 'sites.geojson', title: 'Orrindel heat-flow sites' },
  { id: 'demo-samples', kind: 'samples', file: 'samples.geojson', title: 'Orrindel grade samples' },
  { id: 'demo-faults', kind: 'faults', file: 'faults.geojson', title: 'Orrindel faults' },
  { id: 'demo-wells', kind: 'wells', file: 'wells.geojson', title: 'Orrindel wells' },
  { id: 'demo-outline', kind: 'regions', file: 'outline.geojson', title: 'Orrindel coastline' },
  { id: 'demo-model', kind: 'model', file: 'model.json', title: 'Orrindel crustal model' },
];

/** The demo project: one project among others, created on first start, read-only (its edit token is not kept). */
export const DEMO_PROJECT_ID = 'demo';
export const DEMO_PROJECT_TITLE = 'Orrindel Massif (invented demo region)';

/**
 * The demo project's default run, started in the background on first start (SUBTHERM_DEMO_RUN=0 turns it off):
 * kriging of the sites with the faults as barriers, depth to 300 and 500 °C with P10/P50/P90 from 100
 * realizations, temperature at 5 and 10 km, isograds from the grade samples. Every data set is named.
 */
export const DEMO_RUN_REQUEST = {
  title: 'Demo: kriging, 300/500 °C, isograds',
  sites: 'demo-sites',
  samples: 'demo-samples',
  faults: 'demo-faults',
  model: 'demo-model',
  interpolation: { method: 'kriging' },
  isothermsC: [300, 500],
  depthsKm: [5, 10],
  grid: { cellKm: 2 },
  realizations: 100,
  seed: 1,
} as const;

export const DEMO_TERRAIN = join(DEMO_DIR, 'terrain.tif');

/** Loads the demo data sets into the store under their stable ids (kept if already there). Validates each one. */
export async function loadDemo(store: Store): Promise<void> {
  for (const d of DEMO_DATASETS) {
    if (await store.getDataset(d.id)) continue;
    const text = readFileSync(join(DEMO_DIR, d.file), 'utf8');
    const json = JSON.parse(text) as unknown;
    if (d.kind === 'model') {
      // Validated like an uploaded model; its top-level `name` is a label, kept as the title.
      // Its name is the data set's name in the demo project, not part of the stored content.
      const { model } = parseModelDocument(json, d.file);
      const { name: _name, ...content } = model as typeof model & { name?: unknown };
      await store.putDataset({ id: d.id, kind: 'model', body: JSON.stringify(content), featureCount: model.layers.length, title: d.title });
      continue;
    }
    const parsed = parseFeatureCollection(d.kind, json);
    const body = JSON.stringify({ ...parsed.collection, description: (json as { description?: string }).description });
    await store.putDataset({ id: d.id, kind: d.kind, body, featureCount: parsed.collection.features.length, title: d.title });
  }
  await loadDemoProject(store);
}

/** The demo DEM as the demo project's terrain, like any project's (kept if already there). */
export async function loadDemoTerrain(store: Store, dem: Grid<Float32Array>): Promise<void> {
  if ((await store.getProjectTerrain(DEMO_PROJECT_ID)) !== null) return;
  const { values, ...spec } = dem;
  await store.putProjectTerrain(DEMO_PROJECT_ID, values, {
    ...spec,
    crs: 'EPSG:4326',
    units: 'm',
    sourceCrs: 'EPSG:4326',
    sourceBytes: values.byteLength,
    name: 'Orrindel terrain',
  });
}

/** Creates the demo project holding the demo data sets under their names (kept if already there). */
export async function loadDemoProject(store: Store): Promise<void> {
  if ((await store.getProjectTokenHash(DEMO_PROJECT_ID)) === null) {
    const state = { datasets: Object.fromEntries(DEMO_DATASETS.filter((d) => d.kind !== 'wells').map((d) => [d.kind, d.id])), demo: true };
    await store.createProject({ id: DEMO_PROJECT_ID, title: DEMO_PROJECT_TITLE, stateJson: JSON.stringify(state), tokenHash: hashToken(newEditToken()) });
  }
  const held = new Set((await store.listProjectDatasets(DEMO_PROJECT_ID)).map((d) => d.id));
  for (const d of DEMO_DATASETS) if (!held.has(d.id)) await store.attachDataset(DEMO_PROJECT_ID, d.id, d.title);
}
