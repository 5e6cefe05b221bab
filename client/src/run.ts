/**
 * The run panel: parameters, the run button, a progress bar fed by the run's Server-Sent Events (falling back to
 * polling GET /api/runs/:id when the stream fails), cancel, and after the run the variogram plot and the
 * cross-validation summary.
 */
import { ApiError, getJson, sendJson, type CrossValidation, type RunState, type Variogram } from './api.ts';
import { el, errorBox, fmt, niceTicks, replace, svg } from './dom.ts';
import type { RunParams } from './state.ts';

function numberList(s: string): number[] | null {
  const parts = s.split(/[,;\s]+/).filter((p) => p !== '');
  const out = parts.map(Number);
  return out.length > 0 && out.every((v) => Number.isFinite(v)) ? out : null;
}

export interface RunPanel {
  root: HTMLElement;
  setParams(p: RunParams): void;
  setEnabled(on: boolean): void;
  /** Shows a finished run's summary (variogram and cross-validation). */
  showSummary(run: RunState): void;
}

export function runPanel(opts: {
  params: RunParams;
  model: () => unknown | null;
  onParams: (p: RunParams) => void;
  onDone: (run: RunState) => void;
}): RunPanel {
  let params = { ...opts.params };
  const method = el('select', { id: 'run-method' }, el('option', { value: 'kriging' }, 'ordinary kriging'), el('option', { value: 'idw' }, 'inverse distance'));
  const iso = el('input', { id: 'run-isotherms', inputmode: 'decimal', 'aria-describedby': 'run-param-error' });
  const depths = el('input', { id: 'run-depths', inputmode: 'decimal', 'aria-describedby': 'run-param-error' });
  const facies = el('input', { id: 'run-facies-depth', type: 'number', min: '0.5', max: '300', step: '0.5', placeholder: 'deepest depth' });
  const cell = el('input', { id: 'run-cell', type: 'number', min: '0.5', max: '50', step: '0.5' });
  const reals = el('input', { id: 'run-realizations', type: 'number', min: '0', max: '5000', step: '1' });
  const seed = el('input', { id: 'run-seed', type: 'number', min: '0', step: '1' });
  const paramError = el('p', { class: 'field-error', id: 'run-param-error', 'aria-live': 'polite' });
  const runBtn = el('button', { type: 'button', id: 'run-button', class: 'primary' }, 'Run');
  const cancelBtn = el('button', { type: 'button', id: 'run-cancel', disabled: '' }, 'Cancel');
  const bar = el('div', { class: 'progress-fill', id: 'run-progress-fill' });
  const track = el('div', { class: 'progress', id: 'run-progress', role: 'progressbar', 'aria-valuemin': '0', 'aria-valuemax': '100', 'aria-valuenow': '0', 'aria-label': 'run progress' }, bar);
  const msg = el('p', { class: 'run-message', id: 'run-message', 'aria-live': 'polite' }, 'No run yet.');
  const summary = el('div', { id: 'run-summary' });
  const errorArea = el('div', { id: 'run-error' });
  let current: string | null = null;
  let source: EventSource | null = null;
  let poll: number | null = null;
  let enabled = true;

  const fill = () => {
    method.value = params.method;
    iso.value = params.isothermsC.join(', ');
    depths.value = params.depthsKm.join(', ');
    cell.value = String(params.cellKm);
    facies.value = params.faciesDepthKm === undefined ? '' : String(params.faciesDepthKm);
    reals.value = String(params.realizations);
    seed.value = String(params.seed);
  };
  fill();

  const read = (): RunParams | null => {
    const problems: string[] = [];
    const isoV = numberList(iso.value);
    const depV = numberList(depths.value);
    const c = Number(cell.value), r = Number(reals.value), s = Number(seed.value);
    const fd = facies.value.trim() === '' ? undefined : Number(facies.value);
    if (fd !== undefined && !(fd > 0)) problems.push('facies depth must be > 0 km');
    if (!isoV) problems.push('isotherms: a comma-separated list of temperatures in °C');
    if (!depV) problems.push('depths: a comma-separated list of depths in km');
    if (!(c > 0)) problems.push('cell size must be > 0 km');
    if (!(Number.isInteger(r) && r >= 0)) problems.push('realizations: a whole number ≥ 0');
    if (!(Number.isInteger(s) && s >= 0)) problems.push('seed: a whole number ≥ 0');
    paramError.textContent = problems.join('; ');
    if (problems.length > 0) return null;
    return { ...params, method: method.value as RunParams['method'], isothermsC: isoV!, depthsKm: depV!, faciesDepthKm: fd, cellKm: c, realizations: r, seed: s };
  };
  for (const i of [method, iso, depths, facies, cell, reals, seed]) {
    i.addEventListener('change', () => {
      const p = read();
      if (p) {
        params = p;
        opts.onParams(p);
      }
    });
  }

  const setProgress = (fraction: number, text: string) => {
    const pct = Math.round(Math.max(0, Math.min(1, fraction)) * 100);
    bar.style.width = `${pct}%`;
    track.setAttribute('aria-valuenow', String(pct));
    msg.textContent = `${pct}% — ${text}`;
  };

  const stopWatching = () => {
    source?.close();
    source = null;
    if (poll !== null) window.clearInterval(poll);
    poll = null;
  };

  const finish = async (id: string) => {
    stopWatching();
    cancelBtn.disabled = true;
    runBtn.disabled = !enabled;
    try {
      const run = await getJson<RunState>(`/api/runs/${encodeURIComponent(id)}`);
      if (run.status === 'done') {
        setProgress(1, 'done');
        opts.onDone(run);
      } else if (run.status === 'failed') {
        msg.textContent = 'Run failed.';
        replace(errorArea, errorBox(run.message || 'the run failed'));
      } else msg.textContent = `Run ${run.status}.`;
    } catch (e) {
      replace(errorArea, errorBox(e instanceof Error ? e.message : String(e)));
    }
  };

  const onSnapshot = (id: string, s: Partial<RunState>) => {
    if (id !== current) return;
    if (typeof s.progress === 'number') setProgress(s.progress, s.message ?? s.status ?? '');
    if (s.status === 'done' || s.status === 'failed' || s.status === 'cancelled') void finish(id);
  };

  const startPolling = (id: string) => {
    if (poll !== null) return;
    poll = window.setInterval(() => {
      getJson<RunState>(`/api/runs/${encodeURIComponent(id)}`)
        .then((s) => onSnapshot(id, s))
        .catch((e: unknown) => {
          stopWatching();
          replace(errorArea, errorBox(e instanceof Error ? e.message : String(e)));
        });
    }, 400);
  };

  const watch = (id: string) => {
    stopWatching();
    try {
      source = new EventSource(`/api/runs/${encodeURIComponent(id)}/events`);
    } catch {
      startPolling(id);
      return;
    }
    const handler = (ev: MessageEvent) => {
      try {
        onSnapshot(id, JSON.parse(String(ev.data)) as Partial<RunState>);
      } catch {
        /* a keep-alive or non-JSON line: ignore */
      }
    };
    source.onmessage = handler;
    for (const name of ['progress', 'status', 'done', 'end', 'snapshot']) source.addEventListener(name, handler as EventListener);
    source.onerror = () => {
      // The stream closed or never opened: polling takes over until the run ends.
      source?.close();
      source = null;
      if (current === id) startPolling(id);
    };
  };

  runBtn.addEventListener('click', async () => {
    const p = read();
    const model = opts.model();
    replace(errorArea);
    if (!p) return;
    if (model === null) {
      replace(errorArea, errorBox('The thermal model has problems: fix the marked fields in the Model tab first.'));
      return;
    }
    params = p;
    opts.onParams(p);
    const body: Record<string, unknown> = {
      sites: p.sites,
      interpolation: { method: p.method },
      model,
      isothermsC: p.isothermsC,
      depthsKm: p.depthsKm,
      grid: { cellKm: p.cellKm },
    };
    if (p.faciesDepthKm !== undefined) body.faciesDepthKm = p.faciesDepthKm;
    if (p.samples) body.samples = p.samples;
    if (p.faults) body.faults = p.faults;
    if (p.realizations > 0) {
      body.realizations = p.realizations;
      body.seed = p.seed;
    }
    runBtn.disabled = true;
    setProgress(0, 'submitting');
    replace(summary);
    try {
      const { id } = await sendJson<{ id: string }>('POST', '/api/runs', body);
      current = id;
      cancelBtn.disabled = false;
      setProgress(0, 'queued');
      watch(id);
    } catch (e) {
      runBtn.disabled = !enabled;
      msg.textContent = 'The run was not accepted.';
      replace(errorArea, e instanceof ApiError ? errorBox(e.message, e.details) : errorBox(String(e)));
    }
  });

  cancelBtn.addEventListener('click', async () => {
    if (!current) return;
    const id = current;
    cancelBtn.disabled = true;
    try {
      await sendJson('DELETE', `/api/runs/${encodeURIComponent(id)}`);
      msg.textContent = 'Cancelling…';
    } catch (e) {
      replace(errorArea, errorBox(e instanceof Error ? e.message : String(e)));
    }
  });

  const root = el(
    'div',
    { class: 'run-panel' },
    el('div', { class: 'field-row' }, el('label', { for: method.id }, 'Interpolation'), method),
    el('div', { class: 'field-row' }, el('label', { for: iso.id }, 'Isotherms (°C)'), iso),
    el('div', { class: 'field-row' }, el('label', { for: depths.id }, 'Depths (km)'), depths),
    el('div', { class: 'field-row' }, el('label', { for: facies.id }, 'Facies at depth (km)'), facies),
    el('div', { class: 'field-row' }, el('label', { for: cell.id }, 'Grid cell (km)'), cell),
    el('div', { class: 'field-row' }, el('label', { for: reals.id }, 'Realizations (0 = none)'), reals),
    el('div', { class: 'field-row' }, el('label', { for: seed.id }, 'Seed'), seed),
    paramError,
    el('p', { class: 'note', id: 'run-data-line' }),
    el('div', { class: 'button-row' }, runBtn, cancelBtn),
    track,
    msg,
    errorArea,
    summary,
  );

  const dataLine = () => {
    const line = root.querySelector('#run-data-line');
    if (line) line.textContent = `Data: sites ${params.sites}${params.samples ? `, samples ${params.samples}` : ''}${params.faults ? `, faults ${params.faults}` : ''}.`;
  };
  dataLine();

  return {
    root,
    setParams(p: RunParams) {
      params = { ...p };
      fill();
      dataLine();
    },
    setEnabled(on: boolean) {
      enabled = on;
      for (const c of [method, iso, depths, facies, cell, reals, seed]) c.disabled = !on;
      runBtn.disabled = !on || (current !== null && !cancelBtn.disabled);
    },
    showSummary(run: RunState) {
      current = run.id;
      setProgress(run.status === 'done' ? 1 : run.progress, run.status === 'done' ? `run ${run.id} done` : run.message);
      replace(summary, ...runSummary(run));
    },
  };
}

/** The variogram and cross-validation blocks of a run summary (whatever of them the run has). */
export function runSummary(run: RunState): HTMLElement[] {
  const out: HTMLElement[] = [];
  const interp = run.summary?.interpolation as { variogram?: Variogram | null } | undefined;
  const v = run.summary?.variogram ?? interp?.variogram ?? null;
  if (v) out.push(el('h3', {}, 'Variogram'), variogramPlot(v));
  const cv = run.summary?.crossValidation;
  if (cv) out.push(el('h3', {}, 'Cross-validation (leave one out)'), cvTable(cv));
  for (const w of run.warnings ?? []) out.push(el('p', { class: 'note warning' }, String(w)));
  return out;
}

/** γ(h) of the fitted model (practical-range convention, DESIGN.md §3). */
export function variogramModel(v: Variogram, h: number): number {
  if (h <= 0) return 0;
  const a = v.rangeKm, c0 = v.nugget, c = v.partialSill;
  switch (v.model) {
    case 'exponential':
      return c0 + c * (1 - Math.exp((-3 * h) / a));
    case 'gaussian':
      return c0 + c * (1 - Math.exp((-3 * h * h) / (a * a)));
    case 'spherical':
      return h >= a ? c0 + c : c0 + c * (1.5 * (h / a) - 0.5 * (h / a) ** 3);
    default:
      return NaN;
  }
}

export function variogramPlot(v: Variogram): HTMLElement {
  const W = 340, H = 220, M = { l: 48, r: 12, t: 14, b: 36 };
  const emp = v.empirical ?? [];
  // The lag axis spans the empirical lags (the fit's evidence) with a margin; without them, 1.3 × the range. A range
  // far beyond the lags (a trend in the data) then runs off the plot instead of squeezing the points into a corner.
  const maxLag = emp.length > 0 ? Math.max(...emp.map((e) => e.lagKm)) : 0;
  const hMax = (maxLag > 0 ? maxLag * 1.15 : v.rangeKm * 1.3) || 1;
  const gAtMax = variogramModel(v, hMax);
  const gMax = Math.max(Number.isFinite(gAtMax) ? gAtMax : v.nugget + v.partialSill, ...emp.map((e) => e.gamma)) * 1.1 || 1;
  const x = (h: number) => M.l + (h / hMax) * (W - M.l - M.r);
  const y = (g: number) => H - M.b - (g / gMax) * (H - M.t - M.b);
  const root = svg('svg', { viewBox: `0 0 ${W} ${H}`, width: W, height: H, class: 'variogram-plot', role: 'img', 'aria-label': `variogram: ${v.model} model, nugget ${fmt(v.nugget, 2)}, partial sill ${fmt(v.partialSill, 2)}, range ${fmt(v.rangeKm, 1)} km` });
  root.append(svg('rect', { x: M.l, y: M.t, width: W - M.l - M.r, height: H - M.t - M.b, class: 'frame' }));
  for (const h of niceTicks(0, hMax, 5)) root.append(svg('text', { x: x(h), y: H - M.b + 14, 'text-anchor': 'middle' }, String(h)));
  for (const g of niceTicks(0, gMax, 4)) root.append(svg('text', { x: M.l - 5, y: y(g) + 4, 'text-anchor': 'end' }, String(g)));
  root.append(svg('text', { x: M.l + (W - M.l - M.r) / 2, y: H - 6, 'text-anchor': 'middle', class: 'axis-title' }, 'lag (km)'));
  root.append(svg('text', { x: 11, y: H / 2, transform: `rotate(-90 11 ${H / 2})`, 'text-anchor': 'middle', class: 'axis-title' }, 'semivariance γ'));
  const pts: string[] = [];
  for (let i = 0; i <= 80; i++) {
    const h = (hMax * i) / 80;
    const g = variogramModel(v, h);
    if (Number.isFinite(g)) pts.push(`${x(h).toFixed(1)},${y(g).toFixed(1)}`);
  }
  root.append(svg('polyline', { points: pts.join(' '), class: 'vg-model' }));
  const maxPairs = Math.max(1, ...emp.map((e) => e.pairs));
  for (const e of emp) root.append(svg('circle', { cx: x(e.lagKm), cy: y(e.gamma), r: 2 + 3 * Math.sqrt(e.pairs / maxPairs), class: 'vg-point' }, svg('title', {}, `${fmt(e.lagKm, 1)} km: γ ${fmt(e.gamma, 2)} (${e.pairs} pairs)`)));
  const caption = el('p', { class: 'note' }, `${v.model} model: nugget ${fmt(v.nugget, 2)}, partial sill ${fmt(v.partialSill, 2)}, practical range ${fmt(v.rangeKm, 1)} km. ${emp.length > 0 ? 'Dots: empirical semivariance (size ∝ √pairs).' : 'The run reports no empirical semivariances: the fitted model only.'}`);
  return el('figure', { class: 'variogram' }, root, caption);
}

function cvTable(cv: CrossValidation): HTMLElement {
  const rows: [string, string][] = [
    ['Mean error', fmt(cv.meanError, 2)],
    ['RMSE', fmt(cv.rmse, 2)],
    ['Mean standardized error', fmt(cv.meanStandardizedError, 3)],
    ['Mean squared deviation ratio', fmt(cv.msdr ?? cv.meanSquaredDeviationRatio, 3)],
  ];
  if (typeof cv.n === 'number') rows.push(['Points', String(cv.n)]);
  const filled = rows.filter(([, v]) => v !== '—');
  return el('table', { class: 'kv', id: 'cv-summary' }, el('tbody', {}, ...filled.map(([k, v]) => el('tr', {}, el('th', { scope: 'row' }, k), el('td', { class: 'num' }, v)))));
}
