/**
 * The data panel: the data sets the page shows and runs on (sites, samples, faults), and their upload: a file
 * picker and a drop zone for GeoJSON and CSV. The server validates the file; its report (which feature, which
 * field, what is wrong) is shown as a table in the page.
 */
import type { GeoJSONSource } from 'maplibre-gl';
import { ApiError, getJson, uploadDataset, type DatasetCreated } from './api.ts';
import { featuresBbox, fitBbox, type Bbox } from './basemap.ts';
import type { AppContext } from './context.ts';
import { el, errorBox, problemTable, replace } from './dom.ts';
import type { FeatureCollection } from './structure.ts';
import { ProjectDataTable, newProjectControl, uploadToProject } from './project-data.ts';

export type PointKind = 'sites' | 'samples' | 'faults';
const EMPTY: FeatureCollection = { type: 'FeatureCollection', features: [] };

/** The features of the data sets in use, fetched once per id; listeners hear of every change. */
export class DataSets {
  readonly current: Record<PointKind, FeatureCollection> = { sites: EMPTY, samples: EMPTY, faults: EMPTY };
  private readonly listeners: ((kind: PointKind) => void)[] = [];

  constructor(private readonly ctx: AppContext) {}

  onChange(fn: (kind: PointKind) => void): void {
    this.listeners.push(fn);
  }

  /** Where the data sets in use lie, [west, south, east, north] (null when there are no features). */
  bounds(kinds: PointKind[] = ['sites', 'samples', 'faults']): Bbox | null {
    const boxes = kinds.map((k) => featuresBbox(this.current[k])).filter((b): b is Bbox => b !== null);
    if (boxes.length === 0) return null;
    return [Math.min(...boxes.map((b) => b[0])), Math.min(...boxes.map((b) => b[1])), Math.max(...boxes.map((b) => b[2])), Math.max(...boxes.map((b) => b[3]))];
  }

  /** Loads data set `id` as `kind`: the map source shows it and the listeners hear of it. */
  async load(kind: PointKind, id: string | undefined): Promise<void> {
    if (id === undefined || id === '') return;
    const url = `/api/datasets/${encodeURIComponent(id)}`;
    this.current[kind] = await getJson<FeatureCollection>(url).catch(() => EMPTY);
    void this.ctx.map.getSource<GeoJSONSource>(kind)?.setData(this.current[kind] as unknown as Parameters<GeoJSONSource['setData']>[0]);
    for (const fn of this.listeners) fn(kind);
  }
}

/**
 * The data panel: in a project, the project's data sets and uploads into it (every kind); elsewhere "New project"
 * and loose uploads. An upload of sites, samples or faults becomes the run's data set of its kind and the view
 * fits it.
 */
export function dataPanel(ctx: AppContext, data: DataSets, onParams: () => void): UploadPanel {
  const inProject = ctx.projectId !== null && ctx.editToken !== null;
  let table: ProjectDataTable | null = null;
  const use = (id: string, k: string, fit: boolean) => {
    const kind = k as PointKind;
    if (kind !== 'sites' && kind !== 'samples' && kind !== 'faults') return;
    ctx.state.params = { ...ctx.state.params, [kind]: id };
    onParams();
    void data.load(kind, id).then(() => {
      const b = data.bounds([kind]);
      if (fit && b) fitBbox(ctx.map, b);
      void table?.refresh();
    });
    ctx.syncUrl();
  };
  const send = inProject ? (kind: string, name: string, text: string) => uploadToProject(ctx, kind, name, text) : uploadDataset;
  const upload = uploadPanel((d) => {
    use(d.id, d.kind, true);
    void table?.refresh();
  }, send, inProject ? ['sites', 'samples', 'faults', 'wells', 'regions', 'model'] : ['sites', 'samples', 'faults']);
  upload.root.prepend(el('h3', {}, 'Add data'));
  if (ctx.projectId !== null) {
    table = new ProjectDataTable(ctx, (d) => use(d.id, d.kind, false));
    upload.root.prepend(el('h3', {}, 'Data sets of this project'), table.root);
    void table.refresh();
  }
  if (!inProject) upload.root.prepend(el('h3', {}, 'Your own region'), el('p', { class: 'note' }, 'A project owns its data sets, model and runs, and is shared by link. Start one, then upload your data into it.'), newProjectControl(ctx));
  if (ctx.readOnly) upload.setEnabled(false);
  return upload;
}

export interface UploadPanel {
  root: HTMLElement;
  setEnabled(on: boolean): void;
}

/** Builds the upload panel; `onUploaded` receives the new data set (the caller shows it and uses it in runs). */
const UPLOAD_LABELS: Record<string, string> = { sites: 'heat-flow sites', samples: 'grade samples', faults: 'faults', wells: 'wells', regions: 'regions (model overrides, mask)', model: 'thermal model (JSON)' };

export function uploadPanel(onUploaded: (d: DatasetCreated, fileName: string) => void, upload: (kind: string, name: string, text: string) => Promise<DatasetCreated> = uploadDataset, kinds = ['sites', 'samples', 'faults']): UploadPanel {
  const kind = el('select', { id: 'upload-kind' }, ...kinds.map((k) => el('option', { value: k }, UPLOAD_LABELS[k] ?? k)));
  const input = el('input', { type: 'file', id: 'upload-file', accept: '.geojson,.json,.csv,.txt,application/geo+json,application/json,text/csv' });
  const drop = el('div', { class: 'dropzone', id: 'dropzone', tabindex: '0', role: 'button', 'aria-label': 'Drop a GeoJSON or CSV file here, or press Enter to choose one' }, 'Drop a GeoJSON or CSV file here, or ', el('span', { class: 'linkish' }, 'choose a file'));
  const report = el('div', { id: 'upload-report', 'aria-live': 'polite' });
  let enabled = true;

  const send = async (file: File) => {
    if (!enabled) return;
    replace(report, el('p', { class: 'loading' }, `Uploading ${file.name} as ${kind.value}…`));
    try {
      const text = await file.text();
      const d = await upload(kind.value, file.name, text);
      const warnings = d.warnings ?? [];
      replace(
        report,
        el('div', { class: 'ok', role: 'status' }, `${file.name}: ${d.featureCount} ${d.kind} accepted as data set ${d.id}.`),
        warnings.length > 0 ? el('p', { class: 'note' }, `${warnings.length} warning${warnings.length === 1 ? '' : 's'}:`) : null,
        warnings.length > 0 ? problemTable(warnings.map((w) => (typeof w === 'string' ? { problem: w } : w))) : null,
      );
      onUploaded(d, file.name);
    } catch (e) {
      if (e instanceof ApiError) replace(report, errorBox(`${file.name}: ${e.message}`, e.details));
      else replace(report, errorBox(`${file.name}: ${e instanceof Error ? e.message : String(e)}`));
    }
  };

  input.addEventListener('change', () => {
    const f = input.files?.[0];
    if (f) void send(f);
    input.value = '';
  });
  drop.addEventListener('click', () => input.click());
  drop.addEventListener('keydown', (ev) => {
    if (ev.key === 'Enter' || ev.key === ' ') {
      ev.preventDefault();
      input.click();
    }
  });
  drop.addEventListener('dragover', (ev) => {
    ev.preventDefault();
    drop.classList.add('over');
  });
  drop.addEventListener('dragleave', () => drop.classList.remove('over'));
  drop.addEventListener('drop', (ev) => {
    ev.preventDefault();
    drop.classList.remove('over');
    const f = ev.dataTransfer?.files?.[0];
    if (f) void send(f);
  });

  const root = el(
    'div',
    { class: 'upload' },
    el('div', { class: 'field-row' }, el('label', { for: 'upload-kind' }, 'Kind'), kind),
    drop,
    el('div', { class: 'field-row' }, el('label', { for: 'upload-file' }, 'File'), input),
    el('p', { class: 'note' }, 'CSV: a header row with longitude,latitude (or lon,lat) and the same property names as the GeoJSON (e.g. heatFlowMWm2, quality; zone; kind).'),
    report,
  );
  return {
    root,
    setEnabled(on: boolean) {
      enabled = on;
      for (const c of [kind, input]) c.disabled = !on;
      drop.setAttribute('aria-disabled', String(!on));
      drop.classList.toggle('disabled', !on);
    },
  };
}
