/**
 * The map state a link carries: view, layers (visibility, opacity), run parameters, the chosen depths and the run.
 * Encoded compactly as `?s=<base64url JSON>`; a saved project is `?project=ID` (edit links add `#edit=TOKEN`, in
 * the fragment only, so the token never reaches a server log or a Referer header).
 */
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { runRequestSchema } from '../../shared/schema/run.ts';

export interface LayerState {
  visible: boolean;
  opacity: number;
}

export interface RunParams {
  sites: string;
  samples?: string;
  faults?: string;
  method: 'idw' | 'kriging';
  /** Kriging's geometric anisotropy: none (absent) or 'auto', estimated from directional semivariograms. */
  anisotropy?: 'auto';
  /** A grid data set of the project used as kriging's external drift (interpolation.trend drift:<id>), or absent. */
  driftGrid?: string;
  /** The model data set last loaded into the Model tab with "use" (the run sends the Model tab's model), or absent. */
  modelDataset?: string;
  isothermsC: number[];
  depthsKm: number[];
  /** Depth of the facies layer, km (absent: the deepest of depthsKm). */
  faciesDepthKm?: number;
  cellKm: number;
  realizations: number;
  seed: number;
}

export interface AppState {
  view: { center: [number, number]; zoom: number } | null;
  layers: Record<string, LayerState>;
  params: RunParams;
  model: ThermalModelInput | null;
  runId: string | null;
  /** Depth chosen for the temperature and facies layers, km. */
  depthKm: number | null;
  title: string;
}

export function defaultParams(datasets: Record<string, string>): RunParams {
  return {
    sites: datasets.sites ?? 'demo-sites',
    samples: datasets.samples,
    faults: datasets.faults,
    method: 'kriging',
    isothermsC: [300, 500],
    depthsKm: [5, 10],
    cellKm: 4,
    realizations: 0,
    seed: 1,
  };
}

/**
 * The parameters a run was made with (its stored request, read with the server's own schema), over `base` for what
 * the request leaves out: the run panel shows the run being shown, not the page's defaults.
 */
export function paramsOfRun(request: unknown, base: RunParams): RunParams {
  const r = runRequestSchema.safeParse(request);
  if (!r.success) return base;
  const q = r.data;
  const method = q.interpolation.method === 'idw' || q.interpolation.method === 'kriging' ? q.interpolation.method : base.method;
  return {
    ...base,
    sites: q.sites,
    samples: q.samples,
    faults: q.faults,
    method,
    anisotropy: method === 'kriging' && q.interpolation.anisotropy === 'auto' ? 'auto' : undefined,
    isothermsC: q.isothermsC,
    depthsKm: q.depthsKm,
    faciesDepthKm: q.faciesDepthKm,
    cellKm: q.grid.cellKm ?? base.cellKm,
    realizations: q.realizations ?? 0,
    seed: q.seed ?? base.seed,
  };
}

function toBase64Url(text: string): string {
  const bytes = new TextEncoder().encode(text);
  let bin = '';
  for (const b of bytes) bin += String.fromCharCode(b);
  return btoa(bin).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
}

function fromBase64Url(s: string): string {
  const bin = atob(s.replace(/-/g, '+').replace(/_/g, '/'));
  return new TextDecoder().decode(Uint8Array.from(bin, (c) => c.charCodeAt(0)));
}

const r = (v: number, d: number) => Math.round(v * 10 ** d) / 10 ** d;

/** The compact form: short keys, rounded view, layers as [id, visible 0|1, opacity %]. */
export function encodeState(s: AppState): string {
  const compact = {
    v: s.view ? [r(s.view.center[0], 5), r(s.view.center[1], 5), r(s.view.zoom, 2)] : undefined,
    l: Object.entries(s.layers).map(([id, l]) => [id, l.visible ? 1 : 0, Math.round(l.opacity * 100)]),
    p: s.params,
    m: s.model ?? undefined,
    r: s.runId ?? undefined,
    d: s.depthKm ?? undefined,
    t: s.title || undefined,
  };
  return toBase64Url(JSON.stringify(compact));
}

/** Reads the compact form back onto `base`; fields that are missing or malformed keep base's values. */
export function decodeState(text: string, base: AppState): AppState {
  const c = JSON.parse(fromBase64Url(text)) as Record<string, unknown>;
  const out: AppState = { ...base, layers: { ...base.layers }, params: { ...base.params } };
  const v = c.v;
  if (Array.isArray(v) && v.length === 3 && v.every((x): x is number => typeof x === 'number' && Number.isFinite(x)))
    out.view = { center: [v[0], v[1]], zoom: v[2] };
  if (Array.isArray(c.l)) {
    for (const e of c.l) {
      if (Array.isArray(e) && typeof e[0] === 'string' && typeof e[2] === 'number')
        out.layers[e[0]] = { visible: e[1] === 1, opacity: Math.max(0, Math.min(1, e[2] / 100)) };
    }
  }
  if (c.p && typeof c.p === 'object') Object.assign(out.params, c.p);
  if (c.m && typeof c.m === 'object') out.model = c.m as ThermalModelInput;
  if (typeof c.r === 'string') out.runId = c.r;
  if (typeof c.d === 'number') out.depthKm = c.d;
  if (typeof c.t === 'string') out.title = c.t;
  return out;
}

/** The state as a plain object for a saved project (the same content as the compact link). */
export function stateToJson(s: AppState): Record<string, unknown> {
  return { view: s.view, layers: s.layers, params: s.params, model: s.model, runId: s.runId, depthKm: s.depthKm, title: s.title };
}

export function stateFromJson(j: unknown, base: AppState): AppState {
  const o = (j ?? {}) as Partial<AppState>;
  return {
    view: o.view ?? base.view,
    layers: { ...base.layers, ...(o.layers ?? {}) },
    params: { ...base.params, ...(o.params ?? {}) },
    model: o.model ?? base.model,
    runId: o.runId ?? base.runId,
    depthKm: o.depthKm ?? base.depthKm,
    title: o.title ?? base.title,
  };
}
