import 'maplibre-gl/dist/maplibre-gl.css';
import './app.css';
import { Map as MapLibreMap, Marker, NavigationControl, ScaleControl, setWorkerUrl, type GeoJSONSource } from 'maplibre-gl';
import workerUrl from 'maplibre-gl/dist/maplibre-gl-worker.mjs?url';
import { parseThermalModel } from '../../shared/schema/model.ts';
import { isUncertainModel } from '../../shared/thermal/realize.ts';
import { ApiError, getJson, sendJson, type AppConfig, type RunState } from './api.ts';
import { buildStyle, seaMask } from './style.ts';
import { el, errorBox, replace } from './dom.ts';
import { legendEntries, legendLine } from './legend.ts';
import { LayerPanel } from './layers.ts';
import { defaultParams, decodeState, encodeState, stateFromJson, stateToJson, type AppState } from './state.ts';
import { showRunLayers, type ShownRun } from './runlayers.ts';
import { columnPlot, columnSummary, type ColumnAnswer } from './inspector.ts';
import { uploadPanel } from './data.ts';
import { modelEditor } from './model-editor.ts';
import { runPanel } from './run.ts';
import { StructurePanel, faultReportOf, type FeatureCollection } from './structure.ts';
import { LineDrawer, sectionPlot, type SectionAnswer } from './section.ts';
import { download, mapPng } from './export.ts';

setWorkerUrl(workerUrl);

declare global {
  interface Window {
    subtherm?: {
      map: MapLibreMap;
      config: AppConfig;
      state: AppState;
      readOnly: boolean;
      run: ShownRun | null;
      lastColumn: { request: Record<string, unknown>; answer: ColumnAnswer } | null;
      lastSection: SectionAnswer | null;
      /** Resolves once the page has restored its state (and a saved run's layers). */
      ready: Promise<void>;
    };
  }
}

/** The nearest site counts as "at" a clicked point within this distance, km; beyond it the model's value is used. */
const NEAREST_SITE_KM = 10;
/** Realizations of the column's P10–P90 band for a model with distributions (before a run). */
const COLUMN_REALIZATIONS = 200;

function showError(message: string): void {
  const panel = document.getElementById('panel');
  panel?.prepend(el('div', { class: 'error', role: 'alert' }, message));
}

function message(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}

function tabs(root: HTMLElement, defs: { id: string; label: string; body: HTMLElement }[]): (id: string) => void {
  const list = el('div', { class: 'tabs', role: 'tablist', 'aria-label': 'Tools' });
  const bodies = el('div', { class: 'tab-bodies' });
  const buttons: HTMLButtonElement[] = [];
  const select = (id: string) => {
    for (const b of buttons) {
      const on = b.dataset.tab === id;
      b.setAttribute('aria-selected', String(on));
      b.tabIndex = on ? 0 : -1;
    }
    for (const d of defs) d.body.hidden = d.id !== id;
  };
  defs.forEach((d, i) => {
    const b = el('button', { type: 'button', role: 'tab', id: `tab-${d.id}`, 'aria-controls': `tabpanel-${d.id}`, 'data-tab': d.id }, d.label);
    b.addEventListener('click', () => select(d.id));
    b.addEventListener('keydown', (ev) => {
      const k = ev.key === 'ArrowRight' ? 1 : ev.key === 'ArrowLeft' ? -1 : 0;
      if (k === 0) return;
      const next = defs[(i + k + defs.length) % defs.length];
      select(next.id);
      document.getElementById(`tab-${next.id}`)?.focus();
    });
    buttons.push(b);
    list.append(b);
    d.body.id = `tabpanel-${d.id}`;
    d.body.setAttribute('role', 'tabpanel');
    d.body.setAttribute('aria-labelledby', b.id);
    d.body.classList.add('tab-body');
    bodies.append(d.body);
  });
  root.append(list, bodies);
  select(defs[0].id);
  return select;
}

async function start(): Promise<void> {
  let resolveReady!: () => void;
  const ready = new Promise<void>((r) => (resolveReady = r));
  const cfg = await getJson<AppConfig>('/api/config');
  document.getElementById('caution')!.textContent = cfg.caution;
  document.getElementById('region-name')!.textContent = `${cfg.demo.name} — invented demo region`;
  const ds = cfg.demo.datasets;
  const demoModelPromise = getJson<unknown>(`/api/datasets/${encodeURIComponent(ds.model)}`).then((m) => parseThermalModel(m, 'demo model'));

  // ---- State: a saved project, a compact ?s= link, or the defaults.
  const url = new URL(window.location.href);
  let state: AppState = { view: null, layers: {}, params: defaultParams(ds), model: null, runId: null, depthKm: null, title: `${cfg.demo.name} heat map` };
  // A project opens from /p/ID (the server's links) or ?project=ID.
  const projectId = /^\/p\/([A-Za-z0-9_-]+)\/?$/.exec(url.pathname)?.[1] ?? url.searchParams.get('project');
  const editToken = /(?:^#|&)edit=([^&]+)/.exec(window.location.hash)?.[1] ?? null;
  const readOnly = projectId !== null && editToken === null;
  let restoreError: string | null = null;
  if (projectId !== null) {
    try {
      const p = await getJson<{ id: string; title: string; state: unknown; revision: number }>(`/api/projects/${encodeURIComponent(projectId)}`);
      state = stateFromJson(p.state, state);
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
  }
  if (readOnly) document.getElementById('readonly-badge')!.hidden = false;
  if (projectId !== null) document.getElementById('project-title')!.textContent = state.title;
  document.body.classList.toggle('read-only', readOnly);

  // ---- Map.
  const bounds = cfg.terrain?.bounds ?? [-129.2, -38.95, -126.8, -37.05];
  const map = new MapLibreMap({
    container: 'map',
    style: buildStyle(cfg, window.location.origin),
    ...(state.view ? { center: state.view.center, zoom: state.view.zoom } : { bounds: [[bounds[0], bounds[1]], [bounds[2], bounds[3]]] as [[number, number], [number, number]], fitBoundsOptions: { padding: 20 } }),
    attributionControl: false,
    canvasContextAttributes: { preserveDrawingBuffer: true },
  });
  map.addControl(new NavigationControl({ visualizePitch: false }), 'top-right');
  map.addControl(new ScaleControl({ unit: 'metric' }), 'bottom-right');
  const app = { map, config: cfg, state, readOnly, run: null as ShownRun | null, lastColumn: null as { request: Record<string, unknown>; answer: ColumnAnswer } | null, lastSection: null as SectionAnswer | null, ready };
  window.subtherm = app;
  const demoModel = await demoModelPromise;
  state.model ??= demoModel;
  if (restoreError) showError(restoreError);

  const loaded = new Promise<void>((r) => (map.isStyleLoaded() ? r() : map.once('load', () => r())));
  const outlinePromise = getJson<Parameters<typeof seaMask>[0]>(`/api/datasets/${encodeURIComponent(ds.regions)}`);
  const sitesPromise = getJson<FeatureCollection>(`/api/datasets/${encodeURIComponent(state.params.sites)}`).catch(() => ({ type: 'FeatureCollection', features: [] }) as FeatureCollection);
  const faultsPromise = getJson<FeatureCollection>(`/api/datasets/${encodeURIComponent(state.params.faults ?? ds.faults)}`).catch(() => ({ type: 'FeatureCollection', features: [] }) as FeatureCollection);
  const samplesPromise = getJson<FeatureCollection>(`/api/datasets/${encodeURIComponent(state.params.samples ?? ds.samples)}`).catch(() => ({ type: 'FeatureCollection', features: [] }) as FeatureCollection);
  let sites = await sitesPromise;

  // ---- URL: the compact state follows every change (a project link stays a project link).
  let urlTimer: number | null = null;
  const syncUrl = () => {
    if (urlTimer !== null) window.clearTimeout(urlTimer);
    urlTimer = window.setTimeout(() => {
      const c = map.getCenter();
      state.view = { center: [c.lng, c.lat], zoom: map.getZoom() };
      if (projectId !== null) return;
      const u = new URL(window.location.href);
      u.searchParams.set('s', encodeState(state));
      history.replaceState(null, '', u);
    }, 150);
  };
  map.on('moveend', syncUrl);

  // ---- Left panel: layers.
  const panel = document.getElementById('panel')!;
  const layerPanel = new LayerPanel(map, panel, state.layers, syncUrl);
  await loaded;
  const outline = await outlinePromise;
  (map.getSource('sea-mask') as GeoJSONSource | undefined)?.setData(seaMask(outline));
  for (const entry of legendEntries()) layerPanel.add(entry);
  if (state.params.sites !== ds.sites) (map.getSource('sites') as GeoJSONSource).setData(`/api/datasets/${encodeURIComponent(state.params.sites)}`);
  if (state.params.samples && state.params.samples !== ds.samples) (map.getSource('samples') as GeoJSONSource).setData(`/api/datasets/${encodeURIComponent(state.params.samples)}`);
  if (state.params.faults && state.params.faults !== ds.faults) (map.getSource('faults') as GeoJSONSource).setData(`/api/datasets/${encodeURIComponent(state.params.faults)}`);

  // ---- Right panel: tools.
  const inspectBody = el('div', {});
  const centreBtn = el('button', { type: 'button', id: 'inspect-centre' }, 'Inspect the map centre');
  const inspectHead = el('div', {}, el('p', { class: 'empty', id: 'inspector-empty' }, 'Click anywhere on the map to see the temperature–depth column there (or, from the keyboard, pan the map with the arrow keys and inspect its centre).'), el('div', { class: 'button-row' }, centreBtn));
  const inspectTab = el('div', {}, inspectHead, inspectBody);
  const dataBody = el('div', {});
  const modelBody = el('div', {});
  const runBody = el('div', {});
  const structureBody = el('div', {});
  const sectionBody = el('div', {});
  const shareBody = el('div', {});
  const selectTab = tabs(document.getElementById('tools')!, [
    { id: 'inspect', label: 'Column', body: inspectTab },
    { id: 'data', label: 'Data', body: dataBody },
    { id: 'model', label: 'Model', body: modelBody },
    { id: 'run', label: 'Run', body: runBody },
    { id: 'structure', label: 'Structure', body: structureBody },
    { id: 'section', label: 'Section', body: sectionBody },
    { id: 'share', label: 'Share', body: shareBody },
  ]);

  // Model.
  const editor = modelEditor(state.model ?? demoModel, (m) => {
    if (m) {
      state.model = m;
      syncUrl();
    }
  });
  modelBody.append(el('h3', {}, 'Thermal model'), editor.root);

  // Structure.
  const structure = new StructurePanel(map);
  structureBody.append(structure.root);
  Promise.all([faultsPromise, samplesPromise]).then(([f, s]) => structure.setData(f, s)).catch((e: unknown) => showError(message(e)));

  // Run.
  const showRun = async (run: RunState) => {
    state.runId = run.id;
    const shown = await showRunLayers(map, layerPanel, run, {
      depthKm: state.depthKm,
      onDepth: (d) => {
        state.depthKm = d;
        syncUrl();
      },
      onError: (m) => showError(m),
    });
    app.run = shown;
    runs.showSummary(run);
    const isoLayer = (run.layers ?? []).find((l) => /isograd/i.test(l.name) && l.kind === 'vector');
    let isograds: FeatureCollection | null = null;
    if (isoLayer) isograds = await getJson<FeatureCollection>(`/api/runs/${encodeURIComponent(run.id)}/layers/${encodeURIComponent(isoLayer.name)}.geojson`).catch(() => null);
    const st = run.summary?.structure as { isograds?: Record<string, unknown>[] } | undefined;
    structure.setRun(faultReportOf(run.summary), isograds, Array.isArray(st?.isograds) ? st.isograds : []);
    replace(sectionHint, run.status === 'done' ? 'Draw a line to see the section beneath it.' : '');
    syncUrl();
  };
  const runs = runPanel({
    params: state.params,
    model: () => editor.value(),
    onParams: (p) => {
      state.params = p;
      syncUrl();
    },
    onDone: (run) => {
      showRun(run).catch((e: unknown) => showError(message(e)));
    },
  });
  runBody.append(el('h3', {}, 'Run'), runs.root);

  // Data.
  const upload = uploadPanel((d) => {
    const kind = d.kind as 'sites' | 'samples' | 'faults';
    if (kind === 'sites' || kind === 'samples' || kind === 'faults') {
      state.params = { ...state.params, [kind]: d.id };
      runs.setParams(state.params);
      (map.getSource(kind) as GeoJSONSource | undefined)?.setData(`/api/datasets/${encodeURIComponent(d.id)}`);
      if (kind === 'sites') getJson<FeatureCollection>(`/api/datasets/${encodeURIComponent(d.id)}`).then((fc) => (sites = fc)).catch(() => undefined);
      if (kind !== 'sites') Promise.all([getJson<FeatureCollection>(`/api/datasets/${encodeURIComponent(state.params.faults ?? ds.faults)}`), getJson<FeatureCollection>(`/api/datasets/${encodeURIComponent(state.params.samples ?? ds.samples)}`)]).then(([f, s]) => structure.setData(f, s)).catch(() => undefined);
      syncUrl();
    }
  });
  dataBody.append(el('h3', {}, 'Add data'), upload.root);

  // Column inspector.
  const marker = new Marker({ color: '#d4462c', scale: 0.7 });
  const inspect = async (lon: number, lat: number) => {
    selectTab('inspect');
    document.getElementById('inspector-empty')?.remove();
    marker.setLngLat([lon, lat]).addTo(map);
    replace(inspectBody, el('p', { class: 'loading', id: 'inspector-loading' }, `Computing the column at ${lon.toFixed(4)}°, ${lat.toFixed(4)}°…`));
    let request: Record<string, unknown>;
    let source: string;
    const run = app.run?.run;
    const axis = { isothermsC: state.params.isothermsC, depthsKm: state.params.depthsKm };
    if (run && run.status === 'done') {
      const maxDepthKm = typeof run.summary?.maxDepthKm === 'number' ? run.summary.maxDepthKm : undefined;
      request = { lon, lat, runId: run.id, ...axis, ...(maxDepthKm !== undefined ? { maxDepthKm } : {}) };
      source = `the run's heat-flow surface at this point (run ${run.id})`;
    } else {
      const model = editor.value();
      if (!model) {
        replace(inspectBody, errorBox('The thermal model has problems: fix the marked fields in the Model tab first.'));
        return;
      }
      let best: { d: number; q: number; id: string } | null = null;
      for (const f of sites.features) {
        const c = f.geometry?.type === 'Point' ? (f.geometry.coordinates as number[]) : null;
        const q = f.properties?.heatFlowMWm2;
        if (!c || typeof q !== 'number') continue;
        const d = Math.hypot((c[0] - lon) * 111.195 * Math.cos((lat * Math.PI) / 180), (c[1] - lat) * 111.195);
        if (!best || d < best.d) best = { d, q, id: String(f.properties?.id ?? '') };
      }
      const modelQ = typeof model.surfaceHeatFlowMWm2 === 'number' ? model.surfaceHeatFlowMWm2 : null;
      // The column runs to the model's maximum depth (the bottom of its last layer); a model with distributions
      // gets its P10–P90 band from the server's seeded Monte Carlo.
      Object.assign(axis, { maxDepthKm: Math.min(300, model.layers[model.layers.length - 1].bottomKm) });
      if (isUncertainModel(model)) Object.assign(axis, { realizations: COLUMN_REALIZATIONS, seed: state.params.seed });
      if (best && (best.d <= NEAREST_SITE_KM || modelQ === null)) {
        request = { model, heatFlowMWm2: best.q, ...axis };
        source = `the nearest site, ${best.id}, ${best.d.toFixed(1)} km away (${best.q} mW/m²); no run yet`;
      } else {
        request = { model, ...(modelQ !== null ? { heatFlowMWm2: modelQ } : {}), ...axis };
        source = `the model's surface heat flow (${modelQ ?? '—'} mW/m²): no site within ${NEAREST_SITE_KM} km and no run yet`;
      }
    }
    try {
      const answer = await sendJson<ColumnAnswer>('POST', '/api/column', request);
      app.lastColumn = { request, answer };
      const { plot, readout } = columnPlot(answer);
      replace(inspectBody, el('h3', {}, `Column at ${lon.toFixed(4)}°, ${lat.toFixed(4)}°`), el('div', { class: 'plot-wrap', id: 'column-plot' }, plot), readout, columnSummary(answer, source));
    } catch (e) {
      replace(inspectBody, e instanceof ApiError ? errorBox(`Column: ${e.message}`, e.details) : errorBox(`Column: ${message(e)}`));
    }
  };

  // Section.
  const sectionHint = el('p', { class: 'note', id: 'section-hint' }, 'A section needs a finished run: its heat-flow surface feeds each column.');
  const drawBtn = el('button', { type: 'button', id: 'section-draw' }, 'Draw a section line');
  const sectionDepth = el('input', { id: 'section-depth', type: 'number', min: '1', max: '300', step: '1', value: '40' });
  const sectionOut = el('div', { id: 'section-out', 'aria-live': 'polite' });
  const drawState = el('p', { class: 'note', id: 'section-state', 'aria-live': 'polite' });
  const drawer = document.getElementById('drawer')!;
  const drawerBody = document.getElementById('drawer-body')!;
  document.getElementById('drawer-close')!.addEventListener('click', () => {
    drawer.hidden = true;
  });
  const lineDrawer = new LineDrawer(
    map,
    async (line) => {
      const run = app.run?.run;
      if (!run) {
        replace(sectionOut, errorBox('Run the model first: the section reads the run’s heat-flow surface.'));
        return;
      }
      replace(sectionOut, el('p', { class: 'loading' }, 'Computing the section…'));
      selectTab('section');
      try {
        const s = await sendJson<SectionAnswer>('POST', '/api/section', { runId: run.id, line, maxDepthKm: Number(sectionDepth.value) || 40 });
        app.lastSection = s;
        replace(drawerBody, sectionPlot(s));
        drawer.hidden = false;
        document.getElementById('drawer-title')!.textContent = `Cross-section, ${s.lengthKm.toFixed(1)} km`;
        replace(sectionOut, el('p', { class: 'ok', role: 'status' }, `Section of ${s.lengthKm.toFixed(1)} km to ${Number(sectionDepth.value) || 40} km depth: shown under the map.`));
      } catch (e) {
        replace(sectionOut, e instanceof ApiError ? errorBox(`Section: ${e.message}`, e.details) : errorBox(`Section: ${message(e)}`));
      }
    },
    (drawing, n) => {
      drawBtn.textContent = drawing ? 'Drawing… (Enter or double-click to finish, Escape to cancel)' : 'Draw a section line';
      drawBtn.setAttribute('aria-pressed', String(drawing));
      drawState.textContent = drawing ? `${n} point${n === 1 ? '' : 's'}` : '';
    },
  );
  drawBtn.addEventListener('click', () => (lineDrawer.drawing ? lineDrawer.cancel() : lineDrawer.start()));
  sectionBody.append(el('h3', {}, 'Cross-section'), sectionHint, el('div', { class: 'field-row' }, el('label', { for: sectionDepth.id }, 'Depth of the section (km)'), sectionDepth), el('div', { class: 'button-row' }, drawBtn), drawState, sectionOut);

  centreBtn.addEventListener('click', () => {
    const c = map.getCenter();
    void inspect(c.lng, c.lat);
  });
  map.on('click', (e) => {
    if (lineDrawer.drawing) return;
    void inspect(e.lngLat.lng, e.lngLat.lat);
  });

  // Share and export.
  const shareOut = el('div', { id: 'share-out', 'aria-live': 'polite' });
  const titleInput = el('input', { id: 'share-title', value: state.title, maxlength: '200' });
  titleInput.addEventListener('input', () => {
    state.title = titleInput.value;
    syncUrl();
  });
  const shareBtn = el('button', { type: 'button', id: 'share-button', class: 'primary' }, projectId !== null && editToken !== null ? 'Save a new revision' : 'Save and share');
  const linkRow = (label: string, href: string, id: string) => {
    const input = el('input', { id, readonly: '', value: href, class: 'link' });
    const copy = el('button', { type: 'button' }, 'Copy');
    copy.addEventListener('click', () => {
      input.select();
      void navigator.clipboard?.writeText(href).catch(() => undefined);
    });
    return el('div', { class: 'field-row link-row' }, el('label', { for: id }, label), input, copy);
  };
  shareBtn.addEventListener('click', async () => {
    const c = map.getCenter();
    state.view = { center: [c.lng, c.lat], zoom: map.getZoom() };
    replace(shareOut, el('p', { class: 'loading' }, 'Saving…'));
    try {
      if (projectId !== null && editToken !== null) {
        const r = await sendJson<{ revision: number }>('PUT', `/api/projects/${encodeURIComponent(projectId)}`, { state: stateToJson(state) }, { authorization: `Bearer ${decodeURIComponent(editToken)}` });
        replace(shareOut, el('p', { class: 'ok', role: 'status' }, `Saved revision ${r.revision}.`), linkRow('View link', `${window.location.origin}/?project=${encodeURIComponent(projectId)}`, 'share-view-url'));
      } else {
        const r = await sendJson<{ id: string; editToken: string; viewUrl?: string; editUrl?: string }>('POST', '/api/projects', { title: state.title, state: stateToJson(state) });
        const abs = (u: string | undefined, fallback: string) => new URL(u ?? fallback, window.location.origin).href;
        const view = abs(r.viewUrl, `/?project=${encodeURIComponent(r.id)}`);
        const edit = abs(r.editUrl, `/?project=${encodeURIComponent(r.id)}#edit=${encodeURIComponent(r.editToken)}`);
        replace(
          shareOut,
          el('p', { class: 'ok', role: 'status' }, `Saved as project ${r.id}.`),
          linkRow('View link (read-only)', view, 'share-view-url'),
          linkRow('Edit link (keep it private)', edit, 'share-edit-url'),
          el('p', { class: 'note' }, 'The edit link carries its key after “#”, which browsers never send to a server; anyone holding it can save new revisions.'),
        );
      }
    } catch (e) {
      replace(shareOut, e instanceof ApiError ? errorBox(`Share: ${e.message}`, e.details) : errorBox(`Share: ${message(e)}`));
    }
  });
  const pngBtn = el('button', { type: 'button', id: 'export-png' }, 'Map as PNG');
  pngBtn.addEventListener('click', async () => {
    try {
      const lines = layerPanel.visibleEntries().map((e) => {
        const runLayer = app.run?.run.layers?.find((l) => e.layers.some((id) => map.getLayer(id)?.metadata && (map.getLayer(id)!.metadata as { runLayer?: string }).runLayer === l.name));
        return runLayer ? legendLine(runLayer.title, runLayer.legend, runLayer.units) : e.label;
      });
      const blob = await mapPng(map, [`Layers: ${lines.join(' · ')}`], cfg.caution, `${state.title} — subtherm ${cfg.version}`);
      download(blob, 'subtherm-map.png');
    } catch (e) {
      showError(`PNG export: ${message(e)}`);
    }
  });
  shareBody.append(
    el('h3', {}, 'Share'),
    el('div', { class: 'field-row' }, el('label', { for: titleInput.id }, 'Title'), titleInput),
    el('div', { class: 'button-row' }, shareBtn),
    shareOut,
    el('p', { class: 'note' }, 'The address bar always holds a link to this view (zoom, centre, layers and parameters).'),
    el('h3', {}, 'Export'),
    el('div', { class: 'button-row' }, pngBtn),
    el('p', { class: 'note' }, 'Each computed layer offers GeoTIFF, GeoJSON or CSV downloads in the layer list; every export carries the caution.'),
  );
  document.getElementById('topbar-share')!.addEventListener('click', () => selectTab('share'));

  if (readOnly) {
    upload.setEnabled(false);
    editor.setEnabled(false);
    runs.setEnabled(false);
    shareBtn.disabled = true;
    titleInput.disabled = true;
    for (const b of [dataBody, modelBody, runBody]) b.prepend(el('p', { class: 'note readonly-note' }, 'Read-only view: open the edit link to change this project.'));
  }

  // A saved run comes back with the state.
  if (state.runId) {
    try {
      const run = await getJson<RunState>(`/api/runs/${encodeURIComponent(state.runId)}`);
      if (run.status === 'done') await showRun(run);
    } catch (e) {
      showError(`The saved run ${state.runId} could not be loaded: ${message(e)}`);
    }
  }
  layerPanel.sync();
  syncUrl();
  resolveReady();

  map.on('error', (e) => {
    const msg = (e.error as Error | undefined)?.message ?? 'map error';
    console.error(msg);
  });
}

start().catch((e: unknown) => showError(e instanceof Error ? e.message : String(e)));
