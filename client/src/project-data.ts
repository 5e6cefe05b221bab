/**
 * The data sets a project owns (GET /api/projects/:id/datasets): kind, name, feature count, extent and upload
 * time, each with use-in-runs, zoom to, rename, remove and download; uploads of every kind go into the project.
 * Changes carry the project's edit token; a read-only page lists and downloads only. "New project" starts an empty
 * project and opens its edit link.
 */
import { ApiError, getJson, sendJson, uploadMediaType, uploadQuery, type Problem, type UploadChoice, type UploadOptions } from './api.ts';
import type { Map as MapLibreMap } from 'maplibre-gl';
import { fitBbox, type Bbox } from './basemap.ts';
import { message, type AppContext } from './context.ts';
import { el, errorBox, replace } from './dom.ts';
import { defaultParams, stateToJson } from './state.ts';

export interface ProjectDataset {
  id: string;
  kind: string;
  name: string;
  featureCount: number;
  bbox: Bbox | null;
  uploadedAt: string;
  url: string;
}

const KIND_LABELS: Record<string, string> = {
  sites: 'heat-flow sites',
  samples: 'grade samples',
  faults: 'faults',
  wells: 'wells',
  regions: 'regions',
  model: 'thermal model',
  grid: 'covariate grid (drift)',
};

function auth(ctx: AppContext): Record<string, string> {
  return ctx.editToken ? { authorization: `Bearer ${decodeURIComponent(ctx.editToken)}` } : {};
}

/** Uploads a file into the project as `kind` (CSV, GeoPackage, zipped Shapefile, GeoJSON, or a JSON model). */
export async function uploadToProject(
  ctx: AppContext,
  kind: string,
  file: Blob & { name: string },
  opts: UploadOptions = {},
  replace?: string,
): Promise<ProjectDataset & { warnings: (string | Problem)[] }> {
  // A model is named by its own `name` (the server offers it), a replacement keeps the replaced one's name; other
  // kinds are named by the file's name.
  const name = kind === 'model' || replace !== undefined ? undefined : file.name.replace(/\.[A-Za-z0-9]+$/, '').slice(0, 120) || file.name;
  const base = { kind, ...(name === undefined ? {} : { name }), ...(replace === undefined ? {} : { replace }), filename: file.name.slice(0, 200) };
  const query = uploadQuery(base, opts);
  const res = await fetch(`/api/projects/${encodeURIComponent(ctx.projectId!)}/datasets?${query}`, {
    method: 'POST',
    headers: { accept: 'application/json', 'content-type': uploadMediaType(file.name, kind), ...auth(ctx) },
    body: file,
  });
  const d = await checked<ProjectDataset & { warnings?: (string | Problem)[] }>(res);
  return { ...d, warnings: d.warnings ?? [] };
}

/** The body of a response, or an ApiError with the server's message and details. */
async function checked<T>(res: Response): Promise<T> {
  const body = (await res.json().catch(() => null)) as T | { error?: { message?: string; details?: []; code?: string } } | null;
  if (!res.ok) {
    const e = (body as { error?: { message?: string; details?: []; code?: string } } | null)?.error;
    throw new ApiError(e?.message ?? `${res.status} ${res.statusText}`, res.status, e?.details ?? [], e?.code ?? '');
  }
  return body as T;
}

/** A project's terrain as GET /api/projects/:id/datasets describes it. */
export interface ProjectTerrain {
  name: string;
  bbox: Bbox;
  width: number;
  height: number;
  sourceCrs: string;
  uploadedAt: string;
  source: { type: 'raster-dem'; tiles: string[]; bounds: Bbox; minzoom: number; maxzoom: number; encoding: 'mapbox'; tileSize: number };
}

/** Uploads a DEM GeoTIFF as the project's terrain (EPSG:4326 or an EPSG-coded projected CRS, metres). */
export async function uploadTerrain(ctx: AppContext, file: Blob & { name: string }): Promise<ProjectTerrain> {
  const name = file.name.replace(/\.[A-Za-z0-9]+$/, '').slice(0, 120) || file.name;
  const res = await fetch(`/api/projects/${encodeURIComponent(ctx.projectId!)}/terrain?${new URLSearchParams({ name })}`, {
    method: 'POST',
    headers: { accept: 'application/json', 'content-type': 'image/tiff', ...auth(ctx) },
    body: file,
  });
  return checked<ProjectTerrain>(res);
}

/** Shows (or replaces) the project's terrain as a hillshade over the base, under the computed layers. */
export function showProjectTerrain(map: MapLibreMap, t: ProjectTerrain | null): void {
  if (map.getLayer('project-hillshade')) map.removeLayer('project-hillshade');
  if (map.getSource('project-terrain')) map.removeSource('project-terrain');
  if (t) addProjectHillshade(map, t);
  document.dispatchEvent(new Event(TERRAIN_CHANGED));
}

/** Fired on the document when the project's terrain layer comes or goes (the layer panel lists it only while there). */
export const TERRAIN_CHANGED = 'subtherm:terrain-changed';

function addProjectHillshade(map: MapLibreMap, t: ProjectTerrain): void {
  // A new tile URL per upload, so a replaced terrain is never served from the browser's cache.
  const v = encodeURIComponent(t.uploadedAt);
  map.addSource('project-terrain', { ...t.source, tiles: t.source.tiles.map((u) => `${window.location.origin}${u}?v=${v}`) });
  map.addLayer(
    {
      id: 'project-hillshade',
      type: 'hillshade',
      source: 'project-terrain',
      paint: {
        'hillshade-exaggeration': 0.85,
        'hillshade-shadow-color': '#4a4540',
        'hillshade-highlight-color': '#ffffff',
        'hillshade-accent-color': '#8a8276',
      },
    },
    map.getLayer('world-coast') ? 'world-coast' : undefined,
  );
}

/** The name a model gets in a new project (the user renames it in the Model tab; exports carry that name). */
export const NEUTRAL_MODEL_NAME = 'Crustal model';

/**
 * The model the editor starts from: `content` (a stored model data set, whose name is its data set's name, not part
 * of the content) named after that data set in the demo project, else with the neutral name.
 */
export async function namedStartingModel<M extends { name?: string }>(content: M, datasetId: string, demoProjectId: string | null): Promise<M> {
  if (demoProjectId === null) return { ...content, name: NEUTRAL_MODEL_NAME };
  const held = await getJson<{ datasets: ProjectDataset[] }>(`/api/projects/${encodeURIComponent(demoProjectId)}/datasets`).catch(() => null);
  const name = held?.datasets.find((d) => d.id === datasetId)?.name;
  return { ...content, name: name && name.trim() !== '' ? name : NEUTRAL_MODEL_NAME };
}

/** Starts an empty project (no data sets, the current model under the neutral name) and opens its edit link. */
export async function newProject(ctx: AppContext, title: string): Promise<void> {
  const state = {
    ...stateToJson(ctx.state),
    model: ctx.state.model ? { ...ctx.state.model, name: NEUTRAL_MODEL_NAME } : null,
    runId: null,
    view: null,
    layers: {},
    title,
    params: { ...defaultParams({}), sites: '', samples: undefined, faults: undefined },
  };
  const r = await sendJson<{ id: string; editUrl: string }>('POST', '/api/projects', { title, state });
  window.location.assign(new URL(r.editUrl, window.location.origin).href);
}

function bboxText(b: Bbox | null): string {
  if (!b) return '—';
  const f = (v: number) => v.toFixed(2);
  return `${f(b[0])}…${f(b[2])} °E, ${f(b[1])}…${f(b[3])} °N`;
}

/** Kinds a run takes one of, chosen with "use" (a model is loaded into the Model tab, whose model the run sends). */
const USABLE_KINDS = ['sites', 'samples', 'faults', 'grid', 'model'];

/**
 * The table of a project's data sets (`projectId`: the page's project, or the demo project on the demo page, which
 * is read-only); `onUse` makes one the run's data set of its kind. Only the page's own project shows its terrain
 * (the demo page draws the demo's terrain from its configuration).
 */
export class ProjectDataTable {
  readonly root = el('div', { id: 'project-datasets' });
  private list: ProjectDataset[] = [];
  private terrain: ProjectTerrain | null = null;
  private readonly listeners: ((list: ProjectDataset[]) => void)[] = [];

  constructor(
    private readonly ctx: AppContext,
    private readonly projectId: string,
    private readonly onUse: (d: ProjectDataset) => void,
    /** The upload form's CRS and layer, which a replacement file is read with. */
    private readonly uploadOptions: () => UploadChoice = () => ({}),
  ) {}

  /** `fn` hears of every new listing (e.g. the run panel, which names the data sets it uses). */
  onList(fn: (list: ProjectDataset[]) => void): void {
    this.listeners.push(fn);
  }

  datasets(): ProjectDataset[] {
    return this.list;
  }

  async refresh(): Promise<void> {
    try {
      const r = await getJson<{ datasets: ProjectDataset[]; terrain?: ProjectTerrain | null }>(`/api/projects/${encodeURIComponent(this.projectId)}/datasets`);
      this.list = r.datasets;
      const t = r.terrain ?? null;
      if (this.projectId === this.ctx.projectId && t?.uploadedAt !== this.terrain?.uploadedAt) showProjectTerrain(this.ctx.map, t);
      this.terrain = t;
      this.render();
      for (const fn of this.listeners) fn(this.list);
    } catch (e) {
      replace(this.root, errorBox(`Data sets: ${message(e)}`));
    }
  }

  /** Renames or removes a data set (or the terrain) at `d.url`, then lists the project again. */
  private async change(method: 'PATCH' | 'DELETE', d: { url: string; name: string }, body?: unknown): Promise<void> {
    try {
      const res = await fetch(d.url, {
        method,
        headers: { accept: 'application/json', ...(body ? { 'content-type': 'application/json' } : {}), ...auth(this.ctx) },
        body: body ? JSON.stringify(body) : undefined,
      });
      if (!res.ok) throw new Error(((await res.json().catch(() => null)) as { error?: { message?: string } } | null)?.error?.message ?? `${res.status}`);
      await this.refresh();
    } catch (e) {
      this.root.prepend(errorBox(`${d.name}: ${message(e)}`));
    }
  }

  private row(d: ProjectDataset): HTMLElement[] {
    const editable = this.ctx.editToken !== null && this.projectId === this.ctx.projectId;
    const used = Object.values(this.ctx.state.params).includes(d.id);
    const btn = (label: string, fn: () => void, cls = '') => {
      const b = el('button', { type: 'button', class: `small ${cls}`, 'data-action': label }, label);
      b.addEventListener('click', fn);
      return b;
    };
    const actions = el('div', { class: 'actions' });
    if (USABLE_KINDS.includes(d.kind) && !this.ctx.readOnly) actions.append(btn(used ? 'in use' : 'use', () => this.onUse(d)));
    if (d.bbox) actions.append(btn('zoom to', () => fitBbox(this.ctx.map, d.bbox!)));
    if (editable) {
      actions.append(
        btn('rename', () => {
          const name = window.prompt('New name for this data set', d.name);
          if (name !== null && name.trim() !== '' && name !== d.name) void this.change('PATCH', d, { name: name.trim() });
        }),
      );
      actions.append(this.replaceButton(d, used));
      actions.append(
        btn('remove', () => {
          if (window.confirm(`Remove "${d.name}" from this project? Runs that used it keep their copy.`)) void this.change('DELETE', d);
        }),
      );
    }
    actions.append(el('a', { href: d.url, download: '', class: 'dl' }, 'download'));
    return withActions(
      { 'data-dataset': d.id, 'data-kind': d.kind },
      [
        el('td', {}, KIND_LABELS[d.kind] ?? d.kind),
        el(
          'td',
          { class: 'name', title: `data set ${d.id}` },
          d.name,
          used ? el('span', { class: 'muted' }, d.kind === 'model' ? ' (in the Model tab)' : ' (in the run)') : null,
        ),
        el('td', { class: 'num' }, String(d.featureCount)),
      ],
      whereAndWhen(d.bbox, d.uploadedAt),
      actions,
      d.id,
    );
  }

  /**
   * "replace": a file of the same kind takes the data set's place and name (the server detaches the old one); when
   * the old one was in use, the new one is used instead. A CSV's coordinates and a file's layer are read as chosen
   * under "Add data" (its CRS chooser and layer field).
   */
  private replaceButton(d: ProjectDataset, used: boolean): HTMLElement {
    const input = el('input', { type: 'file', hidden: '', accept: '.geojson,.json,.csv,.txt,.gpkg,.zip,.tif,.tiff' });
    const b = el(
      'button',
      {
        type: 'button',
        class: 'small',
        'data-action': 'replace',
        title: `replace "${d.name}" with a file of the same kind (a CSV's coordinates in the CRS chosen under Add data)`,
      },
      'replace',
    );
    b.addEventListener('click', () => input.click());
    input.addEventListener('change', () => {
      const file = input.files?.[0];
      input.value = '';
      if (!file) return;
      const { problem, ...opts } = this.uploadOptions();
      if (problem) {
        this.root.prepend(errorBox(`${d.name}: ${file.name}: ${problem}`));
        return;
      }
      uploadToProject(this.ctx, d.kind, file, opts, d.id)
        .then(async (nd) => {
          if (used && nd.id !== d.id) this.onUse(nd);
          await this.refresh();
        })
        .catch(async (e: unknown) => {
          // Replaced or removed through another page meanwhile: list the project as it now is, then say why.
          if (e instanceof ApiError && e.code === 'dataset_changed') await this.refresh();
          this.root.prepend(e instanceof ApiError ? errorBox(`${d.name}: ${e.message}`, e.details) : errorBox(`${d.name}: ${message(e)}`));
        });
    });
    return el('span', {}, b, input);
  }

  /** The terrain's row: extent, source CRS, zoom to, and remove (with the edit token). */
  private terrainRow(t: ProjectTerrain): HTMLElement[] {
    const zoom = el('button', { type: 'button', class: 'small', 'data-action': 'zoom to' }, 'zoom to');
    zoom.addEventListener('click', () => fitBbox(this.ctx.map, t.bbox));
    const actions = el('div', { class: 'actions' }, zoom);
    if (this.ctx.editToken !== null && this.projectId === this.ctx.projectId) {
      const remove = el('button', { type: 'button', class: 'small', 'data-action': 'remove', id: 'terrain-remove' }, 'remove');
      const url = `/api/projects/${encodeURIComponent(this.projectId)}/terrain`;
      remove.addEventListener('click', () => {
        if (window.confirm(`Remove the terrain "${t.name}" from this project? Its hillshade goes with it.`)) void this.change('DELETE', { url, name: t.name });
      });
      actions.append(remove);
    }
    return withActions(
      { 'data-kind': 'terrain' },
      [
        el('td', {}, 'terrain'),
        el('td', { class: 'name' }, t.name, el('span', { class: 'muted' }, ` (${t.width} × ${t.height} cells, from ${t.sourceCrs})`)),
        el('td', { class: 'num' }, '—'),
      ],
      whereAndWhen(t.bbox, t.uploadedAt),
      actions,
      'terrain',
    );
  }

  private render(): void {
    if (this.list.length === 0 && this.terrain === null) {
      replace(this.root, el('p', { class: 'empty' }, 'This project holds no data sets yet: upload heat-flow sites below to begin.'));
      return;
    }
    const head = el('tr', {}, ...['Kind', 'Name', 'Features'].map((h) => el('th', { scope: 'col' }, h)));
    replace(
      this.root,
      el(
        'div',
        { class: 'table-scroll' },
        el(
          'table',
          { class: 'report datasets' },
          el('thead', {}, head),
          el('tbody', {}, ...this.list.flatMap((d) => this.row(d)), ...(this.terrain ? this.terrainRow(this.terrain) : [])),
        ),
      ),
    );
  }
}

/**
 * A data set's rows: its description (`cells`, with `attrs`); where it lies and when it came (`detail`), and its
 * actions, each across the table's width, so that neither breaks in a narrow column nor sits past the panel's edge
 * (`key` names the data set the two lower rows belong to).
 */
function withActions(attrs: Record<string, string>, cells: HTMLElement[], detail: HTMLElement[], actions: HTMLElement, key: string): HTMLElement[] {
  const across = (cls: string, data: string, ...content: HTMLElement[]) =>
    el('tr', { class: cls, [data]: key }, el('td', { colspan: String(cells.length) }, ...content));
  return [
    el('tr', attrs, ...cells),
    across('detail-row', 'data-detail-for', el('div', { class: 'where-when' }, ...detail)),
    across('actions-row', 'data-actions-for', actions),
  ];
}

/** The extent ([west, south, east, north], degrees) and upload time (UTC, to the minute) of a data set's detail row. */
function whereAndWhen(bbox: Bbox | null, uploadedAt: string): HTMLElement[] {
  return [
    el('span', { class: 'bbox', title: 'west…east, south…north (WGS84 degrees)' }, bboxText(bbox)),
    el('span', { class: 'uploaded' }, `uploaded ${new Date(uploadedAt).toISOString().slice(0, 16).replace('T', ' ')} UTC`),
  ];
}

/** The "New project" control: a title and a button. */
export function newProjectControl(ctx: AppContext): HTMLElement {
  const title = el('input', { id: 'new-project-title', placeholder: 'Project title', maxlength: '200', value: 'My region' });
  const btn = el('button', { type: 'button', id: 'new-project', class: 'primary' }, 'New project');
  const out = el('div', { 'aria-live': 'polite' });
  btn.addEventListener('click', () => {
    btn.disabled = true;
    newProject(ctx, title.value.trim() || 'Untitled project').catch((e: unknown) => {
      btn.disabled = false;
      replace(out, e instanceof ApiError ? errorBox(e.message, e.details) : errorBox(message(e)));
    });
  });
  return el(
    'div',
    { class: 'new-project' },
    el('div', { class: 'field-row' }, el('label', { for: title.id }, 'Title'), title),
    el('div', { class: 'button-row' }, btn),
    out,
  );
}
