/**
 * The data panel: the data sets the page shows and runs on (sites, samples, faults), and their upload: a file
 * picker and a drop zone for GeoJSON and CSV. The server validates the file; its report (which feature, which
 * field, what is wrong) is shown as a table in the page.
 */
import type { GeoJSONSource } from 'maplibre-gl';
import { ApiError, getJson, uploadDataset, type DatasetCreated, type UploadChoice, type UploadOptions } from './api.ts';
import { featuresBbox, fitBbox, type Bbox } from './basemap.ts';
import { message, type AppContext } from './context.ts';
import { el, errorBox, problemTable, replace } from './dom.ts';
import type { FeatureCollection } from './structure.ts';
import { ProjectDataTable, newProjectControl, showProjectTerrain, uploadTerrain, uploadToProject, type ProjectDataset } from './project-data.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';

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

/** Uploads into the page's project: every kind, a terrain through its own route (shown as hillshade, the view fits it). */
function projectUpload(ctx: AppContext): UploadFn {
  return async (kind, file, opts) => {
    if (kind !== 'terrain') return uploadToProject(ctx, kind, file, opts);
    const t = await uploadTerrain(ctx, file);
    showProjectTerrain(ctx.map, t);
    fitBbox(ctx.map, t.bbox);
    return {
      id: 'terrain',
      kind: 'terrain',
      featureCount: t.width * t.height,
      warnings: [],
      message: `${file.name}: terrain of ${t.width} × ${t.height} cells accepted (from ${t.sourceCrs}, shown as hillshade).`,
    };
  };
}

/** What the data panel tells the page: parameters changed, a model data set to load into the Model tab. */
export interface DataPanelHooks {
  onParams: () => void;
  onModel: (model: ThermalModelInput, d: ProjectDataset) => void;
  /** Every new listing of the project's data sets (their names, for the run panel). */
  onList: (list: ProjectDataset[]) => void;
}

/**
 * The data panel: the data sets of the page's project (on the demo page, the demo project's, read-only) and, in a
 * project, uploads into it (every kind); elsewhere "New project" and loose uploads. An upload of sites, samples or
 * faults becomes the run's data set of its kind and the view fits it; "use" on a model loads it into the Model tab.
 */
export function dataPanel(ctx: AppContext, data: DataSets, hooks: DataPanelHooks): UploadPanel {
  const inProject = ctx.projectId !== null && ctx.editToken !== null;
  const listed = ctx.projectId ?? ctx.cfg.demo.projectId ?? null;
  let table: ProjectDataTable | null = null;
  const use = (id: string, k: string, fit: boolean) => {
    if (k === 'grid') {
      ctx.state.params = { ...ctx.state.params, driftGrid: id };
      hooks.onParams();
      ctx.syncUrl();
      void table?.refresh();
      return;
    }
    const kind = k as PointKind;
    if (kind !== 'sites' && kind !== 'samples' && kind !== 'faults') return;
    ctx.state.params = { ...ctx.state.params, [kind]: id };
    hooks.onParams();
    void data.load(kind, id).then(() => {
      const b = data.bounds([kind]);
      if (fit && b) fitBbox(ctx.map, b);
      void table?.refresh();
    });
    ctx.syncUrl();
  };
  const useModel = async (d: ProjectDataset) => {
    try {
      // The project's copy carries the data set's name (GET …/datasets/:dsId), which the model keeps.
      const model = parseThermalModel(await getJson<unknown>(d.url), d.name);
      ctx.state.params = { ...ctx.state.params, modelDataset: d.id };
      hooks.onModel(model, d);
      hooks.onParams();
      ctx.syncUrl();
      void table?.refresh();
    } catch (e) {
      table?.root.prepend(errorBox(`${d.name}: ${message(e)}`));
    }
  };
  const send: UploadFn = inProject ? projectUpload(ctx) : uploadDataset;
  const upload = uploadPanel(
    (d) => {
      use(d.id, d.kind, true);
      void table?.refresh();
    },
    send,
    inProject ? ['sites', 'samples', 'faults', 'wells', 'regions', 'model', 'terrain', 'grid'] : ['sites', 'samples', 'faults'],
  );
  upload.root.prepend(el('h3', {}, 'Add data'));
  if (listed !== null) {
    table = new ProjectDataTable(
      ctx,
      listed,
      (d) => (d.kind === 'model' ? void useModel(d) : use(d.id, d.kind, false)),
      () => upload.options(),
    );
    table.onList(hooks.onList);
    const heading = ctx.projectId === null ? 'Data sets of the demo project' : 'Data sets of this project';
    const note =
      ctx.projectId === null
        ? el(
            'p',
            { class: 'note', id: 'demo-datasets-note' },
            'The demo project is read-only: "use" puts a data set into the run; start a new project to upload, rename or remove.',
          )
        : null;
    upload.root.prepend(el('h3', {}, heading), ...(note ? [note] : []), table.root);
    void table.refresh();
  }
  if (!inProject)
    upload.root.prepend(
      el('h3', {}, 'Your own region'),
      el('p', { class: 'note' }, 'A project owns its data sets, model and runs, and is shared by link. Start one, then upload your data into it.'),
      newProjectControl(ctx),
    );
  if (ctx.readOnly) upload.setEnabled(false);
  return upload;
}

export interface UploadPanel {
  root: HTMLElement;
  setEnabled(on: boolean): void;
  /** The CRS and layer chosen in the form (what a CSV's x, y and a file's layers are read as), or what is wrong with them. */
  options(): UploadChoice;
}

/** Sends one file as a data set of `kind`; the answer may carry its own success message. */
type UploadFn = (kind: string, file: File, opts: UploadOptions) => Promise<DatasetCreated & { message?: string }>;

const UPLOAD_LABELS: Record<string, string> = {
  sites: 'heat-flow sites',
  samples: 'grade samples',
  faults: 'faults',
  wells: 'wells',
  regions: 'regions (model overrides, mask)',
  model: 'thermal model (JSON)',
  terrain: 'terrain (DEM GeoTIFF, metres)',
  grid: 'covariate grid (GeoTIFF): external drift of kriging',
};

/** EPSG codes offered in the CRS chooser (any other EPSG:nnnn may be typed). */
const CRS_CHOICES: [string, string][] = [
  ['', 'lon/lat (EPSG:4326)'],
  ['EPSG:3857', 'Web Mercator (EPSG:3857)'],
  ['other', 'other EPSG code…'],
];

/** The CRS chooser: lon/lat, a listed code, or a typed EPSG:nnnn; `read` gives the code or a message. */
function crsChooser(): { root: HTMLElement; controls: (HTMLInputElement | HTMLSelectElement)[]; read(): { crs?: string; problem?: string } } {
  const choice = el('select', { id: 'upload-crs' }, ...CRS_CHOICES.map(([v, label]) => el('option', { value: v }, label)));
  const code = el('input', { id: 'upload-crs-code', placeholder: 'EPSG:32706', maxlength: '12', hidden: '', 'aria-label': 'EPSG code of the coordinates' });
  choice.addEventListener('change', () => (code.hidden = choice.value !== 'other'));
  return {
    root: el('div', { class: 'field-row' }, el('label', { for: choice.id }, 'CSV coordinates'), choice, code),
    controls: [choice, code],
    read() {
      if (choice.value !== 'other') return choice.value === '' ? {} : { crs: choice.value };
      const t = code.value
        .trim()
        .toUpperCase()
        .replace(/^(\d+)$/, 'EPSG:$1');
      if (!/^EPSG:\d{4,6}$/.test(t))
        return { problem: `CRS: write the EPSG code of the CSV's x,y columns as EPSG:nnnn (e.g. EPSG:32706 for UTM zone 6 south), got "${code.value}"` };
      return { crs: t };
    },
  };
}

/** The drop zone beside the file picker `input`: a click or Enter opens the picker; a file picked or dropped goes to `onFile`. */
function dropZone(input: HTMLInputElement, onFile: (f: File) => void): HTMLElement {
  const drop = el(
    'div',
    { class: 'dropzone', id: 'dropzone', tabindex: '0', role: 'button', 'aria-label': 'Drop a file here, or press Enter to choose one' },
    'Drop a GeoJSON, CSV, GeoPackage or zipped Shapefile here, or ',
    el('span', { class: 'linkish' }, 'choose a file'),
  );
  input.addEventListener('change', () => {
    const f = input.files?.[0];
    if (f) onFile(f);
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
    if (f) onFile(f);
  });
  return drop;
}

/** "sites.csv: 6 sites accepted as “Survey sites”." (a model: its layers; the id only when there is no name). */
function acceptedText(d: DatasetCreated & { name?: string }, fileName: string): string {
  const what = d.kind === 'model' ? `a thermal model of ${d.featureCount} layers` : `${d.featureCount} ${d.kind}`;
  return `${fileName}: ${what} accepted as ${d.name ? `“${d.name}”` : `data set ${d.id}`}.`;
}

/** The upload report of an accepted file: what was accepted, and its warnings as a table. */
function showAccepted(report: HTMLElement, d: DatasetCreated & { message?: string }, fileName: string): void {
  const warnings = d.warnings ?? [];
  replace(
    report,
    el('div', { class: 'ok', role: 'status', title: `data set ${d.id}` }, d.message ?? acceptedText(d, fileName)),
    warnings.length > 0 ? el('p', { class: 'note' }, `${warnings.length} warning${warnings.length === 1 ? '' : 's'}:`) : null,
    warnings.length > 0 ? problemTable(warnings.map((w) => (typeof w === 'string' ? { problem: w } : w))) : null,
  );
}

/** Builds the upload panel; `onUploaded` receives the new data set (the caller shows it and uses it in runs). */
export function uploadPanel(
  onUploaded: (d: DatasetCreated, fileName: string) => void,
  upload: UploadFn = uploadDataset,
  kinds = ['sites', 'samples', 'faults'],
): UploadPanel {
  const kind = el('select', { id: 'upload-kind' }, ...kinds.map((k) => el('option', { value: k }, UPLOAD_LABELS[k] ?? k)));
  const input = el('input', {
    type: 'file',
    id: 'upload-file',
    accept: '.geojson,.json,.csv,.txt,.gpkg,.zip,.tif,.tiff,application/geo+json,application/json,text/csv',
  });
  const drop = dropZone(input, (f) => void send(f));
  const crs = crsChooser();
  const layer = el('input', { id: 'upload-layer', placeholder: 'only when the file holds several', maxlength: '200' });
  const report = el('div', { id: 'upload-report', 'aria-live': 'polite' });
  let enabled = true;

  const options = (): UploadChoice => {
    const c = crs.read();
    return c.problem ? { problem: c.problem } : { crs: c.crs, layer: layer.value.trim() || undefined };
  };
  const send = async (file: File) => {
    if (!enabled) return;
    const { problem, ...opts } = options();
    if (problem) {
      replace(report, errorBox(`${file.name}: ${problem}`));
      return;
    }
    if (kind.value === 'terrain' && !/\.tiff?$/i.test(file.name)) {
      replace(report, errorBox(`${file.name}: a terrain is a one-band DEM GeoTIFF (.tif) in metres, in EPSG:4326 or an EPSG-coded projected CRS.`));
      return;
    }
    replace(report, el('p', { class: 'loading' }, `Uploading ${file.name} as ${UPLOAD_LABELS[kind.value] ?? kind.value}…`));
    try {
      const d = await upload(kind.value, file, opts);
      showAccepted(report, d, file.name);
      onUploaded(d, file.name);
    } catch (e) {
      if (e instanceof ApiError) replace(report, errorBox(`${file.name}: ${e.message}`, e.details));
      else replace(report, errorBox(`${file.name}: ${e instanceof Error ? e.message : String(e)}`));
    }
  };

  const root = el(
    'div',
    { class: 'upload' },
    el('div', { class: 'field-row' }, el('label', { for: 'upload-kind' }, 'Kind'), kind),
    crs.root,
    el('div', { class: 'field-row' }, el('label', { for: layer.id }, 'Layer'), layer),
    drop,
    el('div', { class: 'field-row' }, el('label', { for: 'upload-file' }, 'File'), input),
    el(
      'p',
      { class: 'note' },
      'CSV: a header row with longitude,latitude (or lon,lat), or x,y with their EPSG code chosen above, and the same property names as the GeoJSON (e.g. heatFlowMWm2, quality; zone; kind). GeoPackage and zipped Shapefile carry their own CRS; name the layer when a file holds several.',
    ),
    report,
  );
  return {
    root,
    options,
    setEnabled(on: boolean) {
      enabled = on;
      for (const c of [kind, input, layer, ...crs.controls]) c.disabled = !on;
      drop.setAttribute('aria-disabled', String(!on));
      drop.classList.toggle('disabled', !on);
    },
  };
}
