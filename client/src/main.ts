/**
 * The page's wiring: read the configuration and the saved state, make the map, build each panel (column, data,
 * model, run, structure, section, share) and connect them. The panels live in their own modules.
 */
import 'maplibre-gl/dist/maplibre-gl.css';
import './app.css';
import { Map as MapLibreMap, NavigationControl, ScaleControl, setWorkerUrl, type GeoJSONSource } from 'maplibre-gl';
import workerUrl from 'maplibre-gl/dist/maplibre-gl-worker.mjs?url';
import { parseThermalModel } from '../../shared/schema/model.ts';
import { getJson, type AppConfig, type RunState } from './api.ts';
import { buildStyle, seaMask } from './style.ts';
import { el } from './dom.ts';
import { legendEntries } from './legend.ts';
import { LayerPanel } from './layers.ts';
import { defaultParams, decodeState, encodeState, paramsOfRun, stateFromJson, type AppState } from './state.ts';
import { showAddedAlone, showRunLayers } from './runlayers.ts';
import { message, showError, tabs, type AppContext, type AppHandle } from './context.ts';
import { columnPanel } from './column.ts';
import { DataSets, dataPanel, type PointKind } from './data.ts';
import { fitBbox, goToBox, installWorldBase } from './basemap.ts';
import { cursorReadout } from './readout.ts';
import { modelEditor } from './model.ts';
import { TERRAIN_CHANGED, namedStartingModel } from './project-data.ts';
import { runPanel, type RunPanel } from './run.ts';
import { StructurePanel, type FeatureCollection } from './structure.ts';
import { sectionPanel, type SectionPanel } from './section.ts';
import { sharePanel } from './share.ts';
import { heatPanel, type HeatPanel } from './heat.ts';

setWorkerUrl(workerUrl);

interface PageStart {
  cfg: AppConfig;
  state: AppState;
  projectId: string | null;
  editToken: string | null;
  restoreError: string | null;
}

/** The configuration and the state to open: a saved project (/p/ID or ?project=ID), a compact ?s= link, or the defaults. */
async function loadPage(): Promise<PageStart> {
  const cfg = await getJson<AppConfig>('/api/config');
  const url = new URL(window.location.href);
  let state: AppState = {
    view: null,
    layers: {},
    params: defaultParams(cfg.demo.datasets),
    model: null,
    runId: null,
    depthKm: null,
    title: `${cfg.demo.name} heat map`,
  };
  const projectId = /^\/p\/([A-Za-z0-9_-]+)\/?$/.exec(url.pathname)?.[1] ?? url.searchParams.get('project');
  const editToken = /(?:^#|&)edit=([^&]+)/.exec(window.location.hash)?.[1] ?? null;
  let restoreError: string | null = null;
  if (projectId !== null) {
    try {
      const p = await getJson<{ id: string; title: string; state: unknown; revision: number }>(`/api/projects/${encodeURIComponent(projectId)}`);
      // A project runs on its own data sets only: the demo's never fill in what its saved state leaves out.
      state = stateFromJson(p.state, { ...state, params: { ...defaultParams({}), sites: '' } });
      state.title = p.title || state.title;
    } catch (e) {
      restoreError = `Could not open project ${projectId}: ${message(e)}`;
    }
  } else if (url.searchParams.has('s')) {
    try {
      state = decodeState(url.searchParams.get('s')!, state);
    } catch (e) {
      restoreError = `The link's map state could not be read (${message(e)}); showing the defaults.`;
    }
  } else state = await demoStart(cfg, state);
  return { cfg, state, projectId, editToken, restoreError };
}

/**
 * The first page opens the demo finished: the demo project's default run (started by the server on first start)
 * with depth to the first isotherm and the isograds shown; its progress is followed until it is done.
 */
async function demoStart(cfg: AppConfig, state: AppState): Promise<AppState> {
  if (!cfg.demo.projectId) return state;
  const p = await getJson<{ state: unknown }>(`/api/projects/${encodeURIComponent(cfg.demo.projectId)}`).catch(() => null);
  const out = p ? stateFromJson(p.state, state) : state;
  out.view = null;
  out.title = state.title;
  const iso = out.params.isothermsC[0] ?? 300;
  if (out.runId) out.layers = { [`run-depth-${iso}C`]: { visible: true, opacity: 0.85 }, 'run-heat-flow': { visible: false, opacity: 0.85 }, ...out.layers };
  return out;
}

function createMap(cfg: AppConfig, state: AppState, demoBase: boolean): MapLibreMap {
  const bounds = cfg.terrain?.bounds ?? [-129.2, -38.95, -126.8, -37.05];
  const view = state.view
    ? { center: state.view.center, zoom: state.view.zoom }
    : {
        bounds: [
          [bounds[0], bounds[1]],
          [bounds[2], bounds[3]],
        ] as [[number, number], [number, number]],
        fitBoundsOptions: { padding: 20 },
      };
  const map = new MapLibreMap({
    container: 'map',
    style: buildStyle(cfg, window.location.origin, demoBase),
    ...view,
    attributionControl: false,
    canvasContextAttributes: { preserveDrawingBuffer: true },
  });
  map.addControl(new NavigationControl({ visualizePitch: false }), 'top-right');
  map.addControl(new ScaleControl({ unit: 'metric' }), 'bottom-right');
  return map;
}

/** The compact state follows every change in the address bar (a project link stays a project link). */
function urlSync(map: MapLibreMap, state: AppState, projectId: string | null): () => void {
  let timer: number | null = null;
  return () => {
    if (timer !== null) window.clearTimeout(timer);
    timer = window.setTimeout(() => {
      const c = map.getCenter();
      state.view = { center: [c.lng, c.lat], zoom: map.getZoom() };
      if (projectId !== null) return;
      const u = new URL(window.location.href);
      u.searchParams.set('s', encodeState(state));
      history.replaceState(null, '', u);
    }, 150);
  };
}

/**
 * A sign of work on the map from the moment a run is done until its layers' tiles are drawn (the map's first idle
 * after they were added): decoding and drawing the tiles takes seconds on a slow machine.
 */
function tilesLoading(map: MapLibreMap): { done(): void } {
  document.getElementById('tiles-loading')?.remove();
  const note = el(
    'div',
    { class: 'map-loading', id: 'tiles-loading', role: 'status', 'aria-live': 'polite' },
    el('span', { class: 'spinner', 'aria-hidden': 'true' }),
    "Drawing the run's layers…",
  );
  document.getElementById('map')!.append(note);
  return {
    done() {
      const hide = () => (map.areTilesLoaded() && !map.isMoving() ? note.remove() : map.once('idle', hide));
      map.once('idle', hide);
      map.triggerRepaint();
    },
  };
}

/**
 * The progress of a run being computed, on the map itself (the run panel may be closed: a newcomer opening the demo
 * while its default run is still computing sees the work advance); it goes when the run ends.
 */
function runProgressNote(map: MapLibreMap): (p: { fraction: number; text: string; ended: boolean }) => void {
  return ({ fraction, text, ended }) => {
    let note = document.getElementById('run-progress-note');
    if (ended) return note?.remove();
    if (!note) {
      note = el('div', { class: 'map-loading', id: 'run-progress-note', role: 'status', 'aria-live': 'polite' });
      map.getContainer().append(note);
    }
    const pct = Math.round(Math.max(0, Math.min(1, fraction)) * 100);
    note.replaceChildren(el('span', { class: 'spinner', 'aria-hidden': 'true' }), `Computing the run: ${pct} %${text ? ` — ${text}` : ''}`);
  };
}

/** Shows a finished run: its layers, its summary, its structure report and the section hint. */
async function showRun(
  ctx: AppContext,
  run: RunState,
  panels: { runs: RunPanel; structure: StructurePanel; section: SectionPanel; heat: HeatPanel },
): Promise<void> {
  ctx.state.runId = run.id;
  const loading = tilesLoading(ctx.map);
  try {
    await showRunContent(ctx, run, panels);
  } finally {
    loading.done();
  }
}

async function showRunContent(
  ctx: AppContext,
  run: RunState,
  panels: { runs: RunPanel; structure: StructurePanel; section: SectionPanel; heat: HeatPanel },
): Promise<void> {
  ctx.app.run = await showRunLayers(ctx.map, ctx.layerPanel, run, {
    depthKm: ctx.state.depthKm,
    onDepth: (d) => {
      ctx.state.depthKm = d;
      ctx.syncUrl();
    },
    onError: (m) => ctx.showError(m),
  });
  // The run panel shows the parameters of the run on the map (its realizations, cell, isotherms, data sets).
  ctx.state.params = paramsOfRun(run.request, ctx.state.params);
  panels.runs.setParams(ctx.state.params);
  panels.runs.showSummary(run);
  const isoLayer = (run.layers ?? []).find((l) => /isograd/i.test(l.name) && l.kind === 'vector');
  const isograds = isoLayer
    ? await getJson<FeatureCollection>(`/api/runs/${encodeURIComponent(run.id)}/layers/${encodeURIComponent(isoLayer.name)}.geojson`).catch(() => null)
    : null;
  const st = run.summary?.structure;
  panels.structure.setRun(st?.faults ?? [], isograds, st?.isograds ?? [], st?.samples ?? []);
  panels.section.setRunDone(run.status === 'done');
  panels.heat.setRun(run);
  ctx.syncUrl();
}

/** Builds the tool tabs and connects the panels; returns how to show a run, and how to follow one still running. */
function buildTools(
  ctx: AppContext,
  data: DataSets,
  demoModel: ReturnType<typeof parseThermalModel>,
): { show: (run: RunState) => Promise<void>; follow: (id: string) => void } {
  const { state } = ctx;
  // Data set names by id (the project's listing), so the run panel names what it uses.
  const names = new Map<string, { kind: string; name: string }>();
  let runs: RunPanel | null = null;
  const editor = modelEditor(state.model ?? demoModel, (m) => {
    if (m) state.model = m;
    runs?.setParams(state.params);
    ctx.syncUrl();
  });
  const modelSource = el('p', { class: 'note', id: 'model-source' });
  const structure = new StructurePanel(ctx.map);
  const section = sectionPanel(ctx);
  let show: (run: RunState) => Promise<void> = () => Promise.resolve();
  const submitTo = (): { path: string; headers: Record<string, string> } =>
    ctx.projectId !== null && ctx.editToken !== null
      ? { path: `/api/projects/${encodeURIComponent(ctx.projectId)}/runs`, headers: { authorization: `Bearer ${decodeURIComponent(ctx.editToken)}` } }
      : { path: '/api/runs', headers: {} };
  runs = runPanel({
    params: state.params,
    model: () => editor.value(),
    datasetName: (id) => names.get(id),
    onParams: (p) => ((state.params = p), ctx.syncUrl()),
    onDone: (run, added) => {
      // Layers the user has just asked for (spread, probability) are shown at once, alone among the run's rasters.
      showAddedAlone(run.layers ?? [], added ?? [], state.layers);
      void show(run).catch((e: unknown) => ctx.showError(message(e)));
    },
    onProgress: runProgressNote(ctx.map),
    submitTo,
  });
  const heat = heatPanel(ctx);
  show = (run) => showRun(ctx, run, { runs, structure, section, heat });
  const column = columnPanel(ctx, { model: () => editor.value(), sites: () => data.current.sites });
  const upload = dataPanel(ctx, data, {
    onParams: () => runs.setParams(state.params),
    onModel: (m, d) => {
      editor.set(m);
      modelSource.textContent = `Loaded from the model data set “${d.name}”: runs send this model, with the edits made here.`;
      modelSource.title = `data set ${d.id}`;
      ctx.selectTab('model');
    },
    onList: (list) => {
      for (const d of list) names.set(d.id, { kind: d.kind, name: d.name });
      runs.setParams(state.params);
    },
  });
  const share = sharePanel(ctx);
  data.onChange((kind) => kind !== 'sites' && structure.setData(data.current.faults, data.current.samples));
  ctx.selectTab = tabs(document.getElementById('tools')!, [
    { id: 'inspect', label: 'Column', body: column.root },
    { id: 'data', label: 'Data', body: upload.root },
    { id: 'model', label: 'Model', body: el('div', {}, el('h3', {}, 'Thermal model'), modelSource, editor.root) },
    { id: 'run', label: 'Run', body: el('div', {}, el('h3', {}, 'Run'), runs.root) },
    { id: 'structure', label: 'Structure', body: structure.root },
    { id: 'section', label: 'Section', body: section.root },
    { id: 'heat', label: 'Heat', body: heat.root },
    { id: 'share', label: 'Share', body: share.root },
  ]);
  ctx.map.on('click', (e) => void (section.drawer.drawing || heat.drawer.drawing ? undefined : column.inspect(e.lngLat.lng, e.lngLat.lat)));
  document.getElementById('topbar-share')!.addEventListener('click', () => ctx.selectTab('share'));
  if (ctx.readOnly) {
    editor.setEnabled(false);
    runs.setEnabled(false);
    for (const id of ['data', 'model', 'run'])
      document
        .getElementById(`tabpanel-${id}`)!
        .prepend(el('p', { class: 'note readonly-note' }, 'Read-only view: open the edit link to change this project.'));
  }
  return { show, follow: (id) => runs.follow(id) };
}

async function start(): Promise<void> {
  let resolveReady!: () => void;
  const ready = new Promise<void>((r) => (resolveReady = r));
  const { cfg, state, projectId, editToken, restoreError } = await loadPage();
  const ds = cfg.demo.datasets;
  // The demo page's model carries the demo model data set's name; a project with no saved model starts from the same
  // layers under a neutral name.
  const onDemo = projectId === null || projectId === cfg.demo.projectId;
  const demoModel = getJson<unknown>(`/api/datasets/${encodeURIComponent(ds.model)}`).then((m) =>
    namedStartingModel(parseThermalModel(m, 'demo model'), ds.model, onDemo ? (cfg.demo.projectId ?? null) : null),
  );
  const readOnly = projectId !== null && editToken === null;
  document.getElementById('caution')!.textContent = cfg.caution;
  document.getElementById('region-name')!.textContent = projectId !== null ? '' : `${cfg.demo.name} — invented demo region`;
  document.getElementById('readonly-badge')!.hidden = !readOnly;
  if (projectId !== null) document.getElementById('project-title')!.textContent = state.title;
  document.body.classList.toggle('read-only', readOnly);

  // The demo's island (its land, coast and sea mask) belongs to the demo's page alone: another project sees the world base.
  const demoBase = projectId === null || projectId === cfg.demo.projectId;
  const map = createMap(cfg, state, demoBase);
  const app: AppHandle = { map, config: cfg, state, readOnly, run: null, lastColumn: null, lastSection: null, heatInPlace: null, ready };
  window.subtherm = app;
  const syncUrl = urlSync(map, state, projectId);
  map.on('moveend', syncUrl);
  const layerPanel = new LayerPanel(map, document.getElementById('panel')!, state.layers, syncUrl);
  const ctx: AppContext = { map, cfg, state, app, layerPanel, projectId, editToken, readOnly, syncUrl, showError, selectTab: () => undefined };
  state.model ??= await demoModel;
  if (restoreError) showError(restoreError);
  await new Promise<void>((r) => (map.isStyleLoaded() ? r() : map.once('load', () => r())));
  if (demoBase)
    void map
      .getSource<GeoJSONSource>('sea-mask')
      ?.setData(seaMask(await getJson<Parameters<typeof seaMask>[0]>(`/api/datasets/${encodeURIComponent(ds.regions)}`)));
  void installWorldBase(map).catch((e: unknown) => console.error(`world base: ${message(e)}`));
  document.getElementById('map')!.append(cursorReadout(map));
  document.querySelector('.topbar .spacer')!.before(goToBox(map));
  const data = new DataSets(ctx);
  for (const entry of legendEntries())
    layerPanel.add({ ...entry, ...(entry.id in data.current ? { bounds: () => data.bounds([entry.id as PointKind]) } : {}) });
  // A data entry is listed while its data set has features, the terrain entry while a hillshade is drawn.
  const listData = (k: PointKind) => layerPanel.setAvailable(k, data.current[k].features.length > 0);
  const listTerrain = () =>
    layerPanel.setAvailable(
      'terrain',
      ['hillshade', 'project-hillshade'].some((id) => map.getLayer(id) !== undefined),
    );
  data.onChange(listData);
  document.addEventListener(TERRAIN_CHANGED, listTerrain);
  (['sites', 'samples', 'faults'] as const).forEach(listData);
  listTerrain();
  const show = buildTools(ctx, data, await demoModel);
  const own = (k: 'samples' | 'faults') => state.params[k] ?? (projectId === null ? ds[k] : undefined);
  await Promise.all([data.load('sites', state.params.sites), data.load('samples', own('samples')), data.load('faults', own('faults'))]);
  // A project opened without a saved view fits its data.
  const dataBox = data.bounds();
  if (projectId !== null && state.view === null && dataBox) fitBbox(map, dataBox, false);

  // A saved run comes back with the state; one still running (the demo's first start) is followed until done.
  if (state.runId) {
    try {
      const run = await getJson<RunState>(`/api/runs/${encodeURIComponent(state.runId)}`);
      if (run.status === 'done') await show.show(run);
      else if (run.status === 'queued' || run.status === 'running') show.follow(run.id);
    } catch (e) {
      showError(`The saved run ${state.runId} could not be loaded: ${message(e)}`);
    }
  }
  layerPanel.sync();
  syncUrl();
  resolveReady();
  map.on('error', (e) => console.error((e.error as Error | undefined)?.message ?? 'map error'));
}

start().catch((e: unknown) => showError(message(e)));
