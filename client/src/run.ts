/**
 * The run panel: parameters (checked with the server's own request schema, shared/schema/run.ts), the run button,
 * a progress bar fed by the run's Server-Sent Events (falling back to polling GET /api/runs/:id when the stream
 * fails), cancel, and after the run the variogram plot and the cross-validation summary.
 */
import { RUN_EVENTS, runRequestSchema } from '../../shared/schema/run.ts';
import { ApiError, getJson, sendJson, type RunState } from './api.ts';
import { el, errorBox, replace } from './dom.ts';
import { runSummary, uncertaintyControls } from './run-summary.ts';
import { runDataLine, type DatasetNameOf } from './run-data-line.ts';
import { progressBar } from './run-progress.ts';
import type { RunParams } from './state.ts';

function numberList(s: string): number[] | null {
  const parts = s.split(/[,;\s]+/).filter((p) => p !== '');
  const out = parts.map(Number);
  return out.length > 0 && out.every((v) => Number.isFinite(v)) ? out : null;
}

/** The words a schema path stands for in the form. */
const FIELD_LABELS: Record<string, string> = {
  isothermsC: 'isotherms (°C)',
  depthsKm: 'depths (km)',
  faciesDepthKm: 'facies depth (km)',
  'grid.cellKm': 'grid cell (km)',
  realizations: 'realizations',
  seed: 'seed',
};

/** The request body of POST /api/runs for parameters `p` and a model. */
export function runBody(p: RunParams, model: unknown): Record<string, unknown> {
  const body: Record<string, unknown> = {
    sites: p.sites,
    interpolation: {
      method: p.method,
      ...(p.anisotropy === 'auto' && p.method === 'kriging' ? { anisotropy: 'auto' } : {}),
      ...(p.driftGrid !== undefined && p.method === 'kriging' ? { trend: `drift:${p.driftGrid}` } : {}),
    },
    model,
    isothermsC: p.isothermsC,
    depthsKm: p.depthsKm,
    grid: { cellKm: p.cellKm },
  };
  if (p.faciesDepthKm !== undefined) body.faciesDepthKm = p.faciesDepthKm;
  if (p.samples) body.samples = p.samples;
  if (p.faults) body.faults = p.faults;
  if (p.realizations > 0) Object.assign(body, { realizations: p.realizations, seed: p.seed });
  return body;
}

/** The problems the server's schema finds in the parameters, in the form's words (empty when they are fine). */
export function paramProblems(p: RunParams): string[] {
  const r = runRequestSchema.safeParse({ ...runBody(p, {}), realizations: p.realizations, seed: p.seed });
  if (r.success) return [];
  return r.error.issues.map((i) => {
    const path = i.path.filter((k) => typeof k === 'string').join('.');
    return `${FIELD_LABELS[path] ?? path}: ${i.message}`;
  });
}

interface RunForm {
  fields: HTMLElement[];
  controls: (HTMLInputElement | HTMLSelectElement)[];
  error: HTMLElement;
  fill(p: RunParams): void;
  /** The parameters in the form, or null (with the problems shown) when they cannot run. */
  read(base: RunParams): RunParams | null;
}

function runForm(nameOf?: RunOptions['datasetName']): RunForm {
  const method = el('select', { id: 'run-method' }, el('option', { value: 'kriging' }, 'ordinary kriging'), el('option', { value: 'idw' }, 'inverse distance'));
  const aniso = el('select', { id: 'run-anisotropy' }, el('option', { value: '' }, 'none (isotropic)'), el('option', { value: 'auto' }, 'estimated'));
  // The external drift: a grid data set chosen with "use" in the project's data sets, or none.
  const drift = el('select', { id: 'run-drift' }, el('option', { value: '' }, 'none'));
  const iso = el('input', { id: 'run-isotherms', inputmode: 'decimal', 'aria-describedby': 'run-param-error' });
  const depths = el('input', { id: 'run-depths', inputmode: 'decimal', 'aria-describedby': 'run-param-error' });
  const facies = el('input', { id: 'run-facies-depth', type: 'number', min: '0.5', max: '300', step: '0.5', placeholder: 'deepest depth' });
  const cell = el('input', { id: 'run-cell', type: 'number', min: '0.5', max: '50', step: '0.5' });
  const reals = el('input', { id: 'run-realizations', type: 'number', min: '0', max: '5000', step: '1' });
  const seed = el('input', { id: 'run-seed', type: 'number', min: '0', step: '1' });
  const error = el('p', { class: 'field-error', id: 'run-param-error', 'aria-live': 'polite' });
  const row = (input: HTMLElement, label: string) => el('div', { class: 'field-row' }, el('label', { for: input.id }, label), input);
  return {
    fields: [
      row(method, 'Interpolation'),
      row(aniso, 'Anisotropy (kriging)'),
      row(drift, 'Drift grid (kriging)'),
      row(iso, 'Isotherms (°C)'),
      row(depths, 'Depths (km)'),
      row(facies, 'Facies at depth (km)'),
      row(cell, 'Grid cell (km)'),
      row(reals, 'Realizations (0 = none)'),
      row(seed, 'Seed'),
    ],
    controls: [method, aniso, drift, iso, depths, facies, cell, reals, seed],
    error,
    fill(p) {
      method.value = p.method;
      aniso.value = p.anisotropy ?? '';
      const driftName = p.driftGrid ? (nameOf?.(p.driftGrid)?.name ?? `grid data set ${p.driftGrid}`) : '';
      replace(
        drift,
        el('option', { value: '' }, 'none'),
        ...(p.driftGrid ? [el('option', { value: p.driftGrid, title: `data set ${p.driftGrid}` }, driftName)] : []),
      );
      drift.value = p.driftGrid ?? '';
      iso.value = p.isothermsC.join(', ');
      depths.value = p.depthsKm.join(', ');
      cell.value = String(p.cellKm);
      facies.value = p.faciesDepthKm === undefined ? '' : String(p.faciesDepthKm);
      reals.value = String(p.realizations);
      seed.value = String(p.seed);
    },
    read(base) {
      const isoV = numberList(iso.value),
        depV = numberList(depths.value);
      const problems: string[] = [];
      if (!isoV) problems.push('isotherms: a comma-separated list of temperatures in °C');
      if (!depV) problems.push('depths: a comma-separated list of depths in km');
      const p: RunParams = {
        ...base,
        method: method.value as RunParams['method'],
        anisotropy: aniso.value === 'auto' ? 'auto' : undefined,
        driftGrid: drift.value === '' ? undefined : drift.value,
        isothermsC: isoV ?? [],
        depthsKm: depV ?? [],
        faciesDepthKm: facies.value.trim() === '' ? undefined : Number(facies.value),
        cellKm: Number(cell.value),
        realizations: Number(reals.value),
        seed: Number(seed.value),
      };
      if (problems.length === 0) problems.push(...paramProblems(p));
      error.textContent = problems.join('; ');
      return problems.length > 0 ? null : p;
    },
  };
}

/** Progress of one run: the event stream, or polling when the stream fails; calls `onEnd` once it ends. */
class RunWatcher {
  private source: EventSource | null = null;
  private poll: number | null = null;

  constructor(
    private readonly onSnapshot: (id: string, s: Partial<RunState>) => void,
    private readonly onFail: (message: string) => void,
  ) {}

  stop(): void {
    this.source?.close();
    this.source = null;
    if (this.poll !== null) window.clearInterval(this.poll);
    this.poll = null;
  }

  private startPolling(id: string): void {
    if (this.poll !== null) return;
    this.poll = window.setInterval(() => {
      getJson<RunState>(`/api/runs/${encodeURIComponent(id)}`)
        .then((s) => this.onSnapshot(id, s))
        .catch((e: unknown) => {
          this.stop();
          this.onFail(e instanceof Error ? e.message : String(e));
        });
    }, 400);
  }

  watch(id: string): void {
    this.stop();
    try {
      this.source = new EventSource(`/api/runs/${encodeURIComponent(id)}/events`);
    } catch {
      this.startPolling(id);
      return;
    }
    // The server sends `progress` while the run is queued or running, then one `end` (shared/schema/run.ts).
    for (const [name, schema] of Object.entries(RUN_EVENTS)) {
      this.source.addEventListener(name, (ev: MessageEvent<string>) => {
        let data: unknown;
        try {
          data = JSON.parse(ev.data);
        } catch {
          return;
        }
        const parsed = schema.safeParse(data);
        if (parsed.success) this.onSnapshot(id, parsed.data);
      });
    }
    this.source.onerror = () => {
      // The stream closed or never opened: polling takes over until the run ends.
      this.source?.close();
      this.source = null;
      this.startPolling(id);
    };
  }
}

export interface RunPanel {
  root: HTMLElement;
  setParams(p: RunParams): void;
  setEnabled(on: boolean): void;
  /** Shows a finished run's summary (variogram and cross-validation). */
  showSummary(run: RunState): void;
  /** Follows a run started elsewhere (e.g. the demo's default run) until it ends. */
  follow(runId: string): void;
}

interface RunOptions {
  params: RunParams;
  model: () => unknown;
  /** The name of a data set by id (kind and name), when the page knows it. */
  datasetName?: DatasetNameOf;
  onParams: (p: RunParams) => void;
  /** A run to show: one that has just ended, or one given new layers (`added`, shown at once). */
  onDone: (run: RunState, added?: string[]) => void;
  /** Where runs go (a project's runs route with its edit token, else POST /api/runs). */
  submitTo?: () => { path: string; headers: Record<string, string> };
  /** Each progress report of the run followed (fraction 0–1 and its message), and its end (`ended` true). */
  onProgress?: (p: { fraction: number; text: string; ended: boolean }) => void;
}

/** The panel's behaviour: the form, the run it follows, its buttons. */
class RunController {
  params: RunParams;
  readonly form: RunForm;
  readonly runBtn = el('button', { type: 'button', id: 'run-button', class: 'primary' }, 'Run');
  readonly cancelBtn = el('button', { type: 'button', id: 'run-cancel', disabled: '' }, 'Cancel');
  readonly progress = progressBar();
  readonly summary = el('div', { id: 'run-summary' });
  readonly errorArea = el('div', { id: 'run-error' });
  readonly dataLine = el('p', { class: 'note', id: 'run-data-line' });
  current: string | null = null;
  /** Run token of the run this page started (cancelling needs it; a cached run comes without one). */
  runToken: string | null = null;
  enabled = true;
  private readonly watcher: RunWatcher;

  constructor(private readonly opts: RunOptions) {
    this.form = runForm(opts.datasetName);
    this.params = { ...opts.params };
    this.watcher = new RunWatcher(
      (id, s) => {
        if (id !== this.current) return;
        const ended = s.status === 'done' || s.status === 'failed' || s.status === 'cancelled';
        if (typeof s.progress === 'number') {
          this.progress.set(s.progress, s.message ?? s.status ?? '');
          this.opts.onProgress?.({ fraction: s.progress, text: s.message ?? s.status ?? '', ended });
        }
        if (ended) void this.finish(id);
      },
      (m) => replace(this.errorArea, errorBox(m)),
    );
    for (const c of this.form.controls) c.addEventListener('change', () => this.readForm());
    this.runBtn.addEventListener('click', () => void this.submit());
    this.cancelBtn.addEventListener('click', () => void this.cancel());
    this.form.fill(this.params);
    this.showData();
  }

  /** The data sets the run uses, by kind and name (the id in a tooltip), and the model the run sends. */
  showData(): void {
    replace(this.dataLine, ...runDataLine(this.params, this.opts.model() as { name?: unknown } | null, this.opts.datasetName));
  }

  readForm(): RunParams | null {
    const p = this.form.read(this.params);
    if (p) {
      this.params = p;
      this.opts.onParams(p);
    }
    return p;
  }

  follow(id: string): void {
    this.current = id;
    this.runToken = null;
    this.cancelBtn.disabled = !this.enabled;
    this.runBtn.disabled = true;
    this.progress.set(0, 'queued');
    this.opts.onProgress?.({ fraction: 0, text: 'queued', ended: false });
    this.watcher.watch(id);
  }

  private async finish(id: string): Promise<void> {
    this.watcher.stop();
    this.opts.onProgress?.({ fraction: 1, text: 'ended', ended: true });
    this.cancelBtn.disabled = true;
    this.runBtn.disabled = !this.enabled;
    try {
      const run = await getJson<RunState>(`/api/runs/${encodeURIComponent(id)}`);
      if (run.status === 'done') {
        this.progress.set(1, 'done — drawing the layers');
        this.opts.onDone(run);
      } else if (run.status === 'failed') {
        this.progress.msg.textContent = 'Run failed.';
        replace(this.errorArea, errorBox(run.message || 'the run failed'));
      } else this.progress.msg.textContent = `Run ${run.status}.`;
    } catch (e) {
      replace(this.errorArea, errorBox(e instanceof Error ? e.message : String(e)));
    }
  }

  private async submit(): Promise<void> {
    replace(this.errorArea);
    const p = this.readForm();
    const model = this.opts.model();
    if (!p) return;
    if (model === null) return replace(this.errorArea, errorBox('The thermal model has problems: fix the marked fields in the Model tab first.'));
    this.runBtn.disabled = true;
    this.progress.set(0, 'submitting');
    replace(this.summary);
    try {
      const to = this.opts.submitTo?.() ?? { path: '/api/runs', headers: {} };
      const { id, runToken } = await sendJson<{ id: string; runToken?: string }>('POST', to.path, runBody(p, model), to.headers);
      this.follow(id);
      this.runToken = runToken ?? null;
    } catch (e) {
      this.runBtn.disabled = !this.enabled;
      this.progress.msg.textContent = 'The run was not accepted.';
      replace(this.errorArea, e instanceof ApiError ? errorBox(e.message, e.details) : errorBox(String(e)));
    }
  }

  private async cancel(): Promise<void> {
    if (!this.current) return;
    this.cancelBtn.disabled = true;
    try {
      const auth: Record<string, string> = this.runToken !== null ? { authorization: `Bearer ${this.runToken}` } : {};
      await sendJson('DELETE', `/api/runs/${encodeURIComponent(this.current)}`, undefined, auth);
      this.progress.msg.textContent = 'Cancelling…';
    } catch (e) {
      replace(this.errorArea, errorBox(e instanceof Error ? e.message : String(e)));
    }
  }
}

export function runPanel(opts: RunOptions): RunPanel {
  const c = new RunController(opts);
  const root = el(
    'div',
    { class: 'run-panel' },
    ...c.form.fields,
    c.form.error,
    c.dataLine,
    el('div', { class: 'button-row' }, c.runBtn, c.cancelBtn),
    c.progress.track,
    c.progress.msg,
    c.errorArea,
    c.summary,
  );
  return {
    root,
    follow: (id) => c.follow(id),
    setParams(p: RunParams) {
      c.params = { ...p };
      c.form.fill(c.params);
      c.showData();
    },
    setEnabled(on: boolean) {
      c.enabled = on;
      for (const x of c.form.controls) x.disabled = !on;
      c.runBtn.disabled = !on || (c.current !== null && !c.cancelBtn.disabled);
    },
    showSummary(run: RunState) {
      c.current = run.id;
      c.progress.set(run.status === 'done' ? 1 : run.progress, run.status === 'done' ? `run ${run.id} done` : run.message);
      const realized = typeof run.request?.realizations === 'number' && run.request.realizations > 0;
      replace(c.summary, ...(realized && run.status === 'done' ? [uncertaintyControls(run, opts.onDone)] : []), ...runSummary(run));
    },
  };
}
