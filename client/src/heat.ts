/**
 * The heat-in-place panel: volumetric heat in place of the shown run over an area (a polygon drawn on the map, a
 * regions data set of the project, or the run's whole grid), between a top and a bottom depth, in rock at or above
 * a minimum temperature, with recovery and efficiencies as numbers or distributions (the CLI's options,
 * shared/resource/schema.ts). It runs as a job on the server's worker pool: POST /api/runs/:id/heat-in-place answers
 * 202 with a job id, the panel polls GET …/:jobId until the report is there, then shows the totals led by the mean
 * of the realizations (with their P50, P10–P90 and the deterministic run beside them), the exceedance reading in words, the caution, and links to the HTML report and the CSV.
 */
import { CAUTION } from '../../shared/caution.ts';
import { reportView, type HeatReport, type ReportLinks } from './heat-report.ts';
import { ApiError, getJson, sendJson, type RunState } from './api.ts';
import { message, type AppContext } from './context.ts';
import { el, errorBox, replace } from './dom.ts';
import { LineDrawer } from './section.ts';

interface JobView {
  jobId: string;
  status: 'queued' | 'running' | 'done' | 'failed';
  position: number;
  url: string;
  links: ReportLinks;
}

/** What the last finished job was asked and answered (read by tests and the console through window.subtherm). */
export interface HeatInPlaceResult {
  runId: string;
  request: { polygon?: unknown; options: Record<string, unknown> };
  report: HeatReport;
  links: JobView['links'];
}

/** The options' fields: request key, label, default, and whether a distribution (JSON) is allowed. */
const FIELDS: { key: string; id: string; label: string; value: string; uncertain?: boolean; optional?: boolean }[] = [
  { key: 'topKm', id: 'hip-top', label: 'Top of the rock (km)', value: '3' },
  { key: 'bottomKm', id: 'hip-bottom', label: 'Bottom, deepest drillable (km)', value: '7' },
  { key: 'minTempC', id: 'hip-min-temp', label: 'Minimum temperature (°C)', value: '150' },
  { key: 'refTempC', id: 'hip-ref-temp', label: 'Reference temperature (°C)', value: '15' },
  { key: 'rhoCMJm3K', id: 'hip-rho-c', label: 'Heat capacity ρC (MJ/m³/K)', value: '2.7', uncertain: true },
  { key: 'recoveryFactor', id: 'hip-recovery', label: 'Recovery factor (0–1)', value: '0.1', uncertain: true },
  { key: 'utilizationEfficiency', id: 'hip-efficiency', label: 'Utilization efficiency (0–1)', value: '0.4', uncertain: true },
  { key: 'conversionEfficiency', id: 'hip-conversion', label: 'Conversion efficiency (0–1, optional)', value: '', uncertain: true, optional: true },
  { key: 'lifeYears', id: 'hip-life', label: 'Plant life (years)', value: '30' },
  { key: 'realizations', id: 'hip-realizations', label: 'Realizations (0 = nominal only)', value: '100' },
  { key: 'seed', id: 'hip-seed', label: 'Seed', value: '1' },
];

/** A field's text as a number or, where allowed, a distribution written as JSON; a message when it is neither. */
export function readOption(text: string, label: string, uncertain: boolean): { value?: unknown; problem?: string } {
  const s = text.trim();
  if (s === '') return {};
  if (uncertain && s.startsWith('{')) {
    try {
      return { value: JSON.parse(s) as unknown };
    } catch {
      return { problem: `${label}: not valid JSON (a distribution looks like {"dist":"triangular","min":0.05,"mode":0.1,"max":0.2})` };
    }
  }
  const v = Number(s);
  if (!Number.isFinite(v)) return { problem: `${label}: expected a number${uncertain ? ' or a distribution as JSON' : ''}, got "${s}"` };
  return { value: v };
}

export interface HeatPanel {
  root: HTMLElement;
  drawer: LineDrawer;
  /** The run the panel computes on (null: none shown yet). */
  setRun(run: RunState | null): void;
}

type AreaChoice = 'drawn' | 'regions' | 'grid';

/** The area controls: a polygon drawn on the map, a regions data set of the project, or the whole grid. */
class AreaPicker {
  ring: [number, number][] | null = null;
  readonly choice = el(
    'select',
    { id: 'hip-area' },
    el('option', { value: 'drawn' }, 'a polygon drawn on the map'),
    el('option', { value: 'regions' }, 'a regions data set of the project'),
    el('option', { value: 'grid' }, "the run's whole grid"),
  );
  readonly regions = el('select', { id: 'hip-regions' });
  readonly drawBtn = el('button', { type: 'button', id: 'hip-draw' }, 'Draw the area');
  readonly clearBtn = el('button', { type: 'button', id: 'hip-clear' }, 'Clear');
  readonly status = el('span', { class: 'muted', id: 'hip-draw-status' }, 'No area drawn yet.');
  readonly drawer: LineDrawer;
  readonly root: HTMLElement;

  constructor(private readonly ctx: AppContext) {
    this.drawer = new LineDrawer(
      ctx.map,
      (ring) => {
        this.ring = ring;
        this.status.textContent = `Area drawn: ${ring.length} corners.`;
      },
      (drawing, n) => {
        this.drawBtn.textContent = drawing ? 'Drawing… (double-click or Enter ends)' : 'Draw the area';
        if (drawing) this.status.textContent = `${n} corner${n === 1 ? '' : 's'}; double-click or press Enter to close the polygon, Escape to cancel.`;
      },
      { sourceId: 'hip-area', closed: true },
    );
    this.drawBtn.addEventListener('click', () => {
      this.ring = null;
      this.drawer.start();
    });
    this.clearBtn.addEventListener('click', () => {
      this.ring = null;
      this.drawer.cancel();
      this.status.textContent = 'No area drawn yet.';
    });
    const drawRow = el('div', { class: 'button-row', id: 'hip-draw-row' }, this.drawBtn, this.clearBtn, this.status);
    const regionRow = el('div', { class: 'field-row', id: 'hip-regions-row', hidden: '' }, el('label', { for: this.regions.id }, 'Regions'), this.regions);
    this.choice.addEventListener('change', () => {
      drawRow.hidden = this.choice.value !== 'drawn';
      regionRow.hidden = this.choice.value !== 'regions';
      if (this.choice.value === 'regions') void this.listRegions();
    });
    this.root = el('div', {}, el('div', { class: 'field-row' }, el('label', { for: this.choice.id }, 'Area'), this.choice), drawRow, regionRow);
  }

  private async listRegions(): Promise<void> {
    replace(this.regions);
    if (this.ctx.projectId === null) {
      this.regions.append(el('option', { value: '' }, 'open a project to use its regions'));
      return;
    }
    const r = await getJson<{ datasets: { id: string; kind: string; name: string; url: string; featureCount: number }[] }>(
      `/api/projects/${encodeURIComponent(this.ctx.projectId)}/datasets`,
    ).catch(() => ({ datasets: [] }));
    const list = r.datasets.filter((d) => d.kind === 'regions');
    if (list.length === 0) this.regions.append(el('option', { value: '' }, 'none: upload a regions data set in the Data tab'));
    for (const d of list) this.regions.append(el('option', { value: d.url }, `${d.name} (${d.featureCount} polygons)`));
  }

  /** The request's polygon (undefined: the whole grid), or a message saying what is missing. */
  async polygon(): Promise<{ polygon?: unknown; problem?: string }> {
    const c = this.choice.value as AreaChoice;
    if (c === 'grid') return {};
    if (c === 'drawn') {
      if (!this.ring || this.ring.length < 3)
        return { problem: 'Draw the area first: press "Draw the area", click its corners on the map, double-click to close it.' };
      return { polygon: { type: 'Feature', properties: { name: 'drawn area' }, geometry: { type: 'Polygon', coordinates: [[...this.ring, this.ring[0]]] } } };
    }
    if (this.regions.value === '') return { problem: 'Choose a regions data set (upload one in the Data tab), or draw the area.' };
    const fc = await getJson<{ type: string; features: { geometry: { type: string } | null }[] }>(this.regions.value);
    const features = fc.features.filter((f) => f.geometry && (f.geometry.type === 'Polygon' || f.geometry.type === 'MultiPolygon'));
    if (features.length === 0) return { problem: 'That regions data set holds no polygons.' };
    return { polygon: { type: 'FeatureCollection', features } };
  }
}

/** Polls the job until it is done (or failed); `onWait` hears of each queued/running answer. */
async function waitForJob(url: string, onWait: (v: JobView) => void): Promise<HeatReport> {
  for (;;) {
    const res = await fetch(url, { headers: { accept: 'application/json' } });
    const body = (await res.json().catch(() => null)) as (JobView & HeatReport) | { error?: { code?: string; message?: string; details?: [] } } | null;
    if (res.status === 202) {
      onWait(body as JobView);
      await new Promise((r) => window.setTimeout(r, 500));
      continue;
    }
    if (!res.ok) {
      const e = (body as { error?: { code?: string; message?: string; details?: [] } } | null)?.error;
      throw new ApiError(e?.message ?? `${res.status} ${res.statusText}`, res.status, e?.details ?? [], e?.code ?? '');
    }
    return body as HeatReport;
  }
}

/** The option fields (FIELDS), the heat-flow error choice and how to read them into the request's options. */
class OptionsForm {
  readonly inputs = FIELDS.map((f) =>
    el('input', {
      id: f.id,
      value: f.value,
      inputmode: 'decimal',
      class: 'num',
      'data-option': f.key,
      ...(f.uncertain ? { title: 'a number, or a distribution as JSON, e.g. {"dist":"triangular","min":0.05,"mode":0.1,"max":0.2}' } : {}),
    }),
  );
  readonly corr = el(
    'select',
    { id: 'hip-correlation' },
    el('option', { value: 'full' }, 'fully correlated'),
    el('option', { value: 'independent' }, 'independent per cell'),
  );
  readonly seedRow = el('div', { class: 'field-row' });
  readonly corrRow = el('div', { class: 'field-row' }, el('label', { for: this.corr.id }, 'Heat-flow errors'), this.corr);
  readonly realizationsNote = el('p', { class: 'note', id: 'hip-realizations-note' });
  /** The shown run's realizations (0: none): with them the run lends its own fields and seed. */
  runRealizations = 0;

  /** One labelled row per field. */
  rows(): HTMLElement[] {
    const rows = FIELDS.map((f) => (f.key === 'seed' ? this.seedRow : el('div', { class: 'field-row' })));
    FIELDS.forEach((f, i) => rows[i].append(el('label', { for: f.id }, f.label), this.inputs[i]));
    return rows;
  }

  /** The request's options, or the problems found in the fields (each field marked). */
  read(): { options?: Record<string, unknown>; problems: string[] } {
    const own = this.runRealizations > 0;
    const options: Record<string, unknown> = {};
    const problems: string[] = [];
    FIELDS.forEach((f, i) => {
      if (f.key === 'seed' && own) return;
      const r = readOption(this.inputs[i].value, f.label, f.uncertain === true);
      this.inputs[i].setAttribute('aria-invalid', String(r.problem !== undefined));
      if (r.problem) problems.push(r.problem);
      else if (r.value !== undefined) options[f.key] = r.value;
      else if (!f.optional) problems.push(`${f.label}: a value is needed`);
    });
    if (!own) options.heatFlowErrorCorrelation = this.corr.value;
    return problems.length > 0 ? { problems } : { options, problems };
  }

  /** A run with realizations lends its own: its simulated heat-flow fields and its seed (the server uses them). */
  setRunRealizations(n: number): void {
    this.runRealizations = n;
    const own = n > 0;
    this.seedRow.hidden = this.corrRow.hidden = own;
    const input = this.inputs[FIELDS.findIndex((f) => f.key === 'realizations')];
    if (own) input.value = String(Math.min(n, Number(input.value) || n));
    this.realizationsNote.textContent = own
      ? `The heat-flow uncertainty comes from the run's own ${n} realizations (its simulated heat-flow fields and its seed), the same ones its percentile, spread and probability maps use; ask for at most ${n}.`
      : 'The run has no realizations: the heat-flow uncertainty is its kriging standard deviation, drawn with the seed above.';
  }
}

/** The job's controls and output: the button, progress, status line and the report area. */
interface JobControls {
  btn: HTMLButtonElement;
  progress: HTMLElement;
  status: HTMLElement;
  out: HTMLElement;
}

/** Sends the job for `runId`, follows it and shows its report (or the error); records it on the page handle. */
async function runHeatJob(ctx: AppContext, runId: string, request: { polygon?: unknown; options: Record<string, unknown> }, v: JobControls): Promise<void> {
  v.btn.disabled = true;
  v.progress.hidden = false;
  replace(v.out);
  v.status.textContent = 'Sending the job…';
  const started = Date.now();
  try {
    const job = await sendJson<JobView>('POST', `/api/runs/${encodeURIComponent(runId)}/heat-in-place`, request);
    const report = await waitForJob(job.url, (w) => {
      const s = Math.round((Date.now() - started) / 1000);
      v.status.textContent =
        w.status === 'queued' ? `Queued on the server (position ${w.position}), ${s} s…` : `Computing on the server's worker pool, ${s} s…`;
    });
    v.status.textContent = `Done in ${((Date.now() - started) / 1000).toFixed(1)} s.`;
    replace(v.out, reportView(report, job.links));
    ctx.app.heatInPlace = { runId, request, report, links: job.links };
  } catch (e) {
    v.status.textContent = '';
    replace(v.out, e instanceof ApiError ? errorBox(`Heat in place: ${e.message}`, e.details) : errorBox(`Heat in place: ${message(e)}`));
  } finally {
    v.progress.hidden = true;
  }
}

export function heatPanel(ctx: AppContext): HeatPanel {
  let run: RunState | null = null;
  const area = new AreaPicker(ctx);
  const form = new OptionsForm();
  const btn = el('button', { type: 'button', id: 'hip-run', class: 'primary', disabled: '' }, 'Compute heat in place');
  const runLine = el('p', { class: 'note', id: 'hip-run-line' }, 'Run a model first (Run tab): heat in place is computed over a finished run.');
  const progress = el(
    'div',
    { class: 'progress indeterminate', id: 'hip-progress', role: 'progressbar', 'aria-label': 'heat-in-place job', hidden: '' },
    el('div', { class: 'progress-fill' }),
  );
  const status = el('p', { class: 'run-message', id: 'hip-status', 'aria-live': 'polite' });
  const out = el('div', { id: 'hip-out' });

  const compute = async () => {
    if (!run) return;
    const o = form.read();
    if (!o.options) return replace(out, errorBox(o.problems.join('; ')));
    const a: { polygon?: unknown; problem?: string } = await area
      .polygon()
      .catch((e: unknown) => ({ problem: `The regions could not be read: ${message(e)}` }));
    if (a.problem) return replace(out, errorBox(a.problem));
    const request = { ...(a.polygon !== undefined ? { polygon: a.polygon } : {}), options: o.options };
    await runHeatJob(ctx, run.id, request, { btn, progress, status, out });
    btn.disabled = run === null;
  };
  btn.addEventListener('click', () => void compute());

  const root = el(
    'div',
    { class: 'heat-panel' },
    el('h3', {}, 'Heat in place'),
    runLine,
    area.root,
    el('h3', {}, 'Reservoir and plant'),
    ...form.rows(),
    form.corrRow,
    form.realizationsNote,
    el(
      'p',
      { class: 'note' },
      'ρC, the recovery factor and the efficiencies take a number or a distribution as JSON, e.g. {"dist":"triangular","min":0.05,"mode":0.1,"max":0.2}.',
    ),
    el('div', { class: 'button-row' }, btn),
    progress,
    status,
    out,
    el('p', { class: 'note caution-note' }, CAUTION),
  );
  return {
    root,
    drawer: area.drawer,
    setRun(r) {
      run = r && r.status === 'done' ? r : null;
      btn.disabled = run === null;
      const n = run?.request?.realizations;
      form.setRunRealizations(typeof n === 'number' && n > 0 ? n : 0);
      runLine.textContent = run ? `Over run ${run.id}.` : 'Run a model first (Run tab): heat in place is computed over a finished run.';
    },
  };
}
