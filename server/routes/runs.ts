/**
 * Runs: POST /api/runs queues a run (or returns the cached one), GET /api/runs/:id reports it, GET …/events
 * streams its progress (Server-Sent Events), DELETE cancels it, GET …/layers/:name.:ext serves its files.
 */
import type { Context, Hono } from 'hono';
import { streamSSE } from 'hono/streaming';
import { existsSync } from 'node:fs';
import { InputError } from '../../shared/errors.ts';
import { kmPerDegree } from '../../shared/interp/projection.ts';
import { RUN_EVENTS, runRequestSchema, type RunLayerInfo, type RunRequest } from '../../shared/schema/run.ts';
import { interpolationOptionsSchema, runTrend } from '../../shared/schema/interp.ts';
import { requireDeclusterWithTransform } from '../runs/heat-flow-simulation.ts';
import { VERSION } from '../../shared/version.ts';
import { isTerminal, type RunSnapshot } from '../runs/jobs.ts';
import { parseModelDocument } from '../../shared/products/model-input.ts';
import { LAYER_EXTS, type LayerExt } from '../runs/types.ts';
import { sha256Hex } from '../store/sqlite.ts';
import type { DatasetRecord, RunRecord } from '../store/types.ts';
import { bearerToken } from '../security.ts';
import { clientAddress, jsonBody, notFound, requireJsonType, type AppContext } from './context.ts';
import { idSchema, parseWith } from './schemas.ts';

/** JSON with object keys sorted at every level: the canonical form hashed for the run cache. */
export function canonicalJson(v: unknown): string {
  if (v === null || typeof v !== 'object') return JSON.stringify(v) ?? 'null';
  if (Array.isArray(v)) return `[${v.map(canonicalJson).join(',')}]`;
  const o = v as Record<string, unknown>;
  return `{${Object.keys(o)
    .filter((k) => o[k] !== undefined)
    .sort()
    .map((k) => `${JSON.stringify(k)}:${canonicalJson(o[k])}`)
    .join(',')}}`;
}

const ROLE_KINDS = { sites: 'sites', samples: 'samples', faults: 'faults', regions: 'regions' } as const;

/** Layer description with the URL of each of its formats. */
export function withUrls(runId: string, info: RunLayerInfo): RunLayerInfo & { urls: Record<string, string> } {
  const base = `/api/runs/${encodeURIComponent(runId)}/layers/${encodeURIComponent(info.name)}`;
  return { ...info, urls: Object.fromEntries((info.formats ?? []).map((f) => [f, `${base}.${f}`])) };
}

/** GET /api/runs/:id body. */
export function runView(rec: RunRecord, live: RunSnapshot | null) {
  const s = live ?? { status: rec.status, progress: rec.progress, message: rec.message };
  return {
    id: rec.id,
    status: s.status,
    progress: s.progress,
    message: s.message,
    // While queued: the place in the fair start order; while queued or running: seconds to the end (null = unknown).
    ...(live?.position !== undefined ? { position: live.position } : {}),
    ...(live?.estimateSeconds !== undefined ? { estimateSeconds: live.estimateSeconds } : {}),
    layers: (rec.layers as RunLayerInfo[]).map((l) => withUrls(rec.id, l)),
    summary: rec.summary,
    warnings: rec.warnings,
    request: rec.request,
    createdAt: rec.createdAt,
    updatedAt: rec.updatedAt,
  };
}

/** Number of output cells the request asks for (from size, or bbox/sites extent and cellKm); null if unknown. */
export function requestedCells(req: RunRequest, sitesBody: string): number | null {
  const ip = req.interpolation as { size?: [number, number]; cellKm?: number; bbox?: [number, number, number, number] };
  const size = req.grid.size ?? ip.size;
  const cellKm = req.grid.cellKm ?? ip.cellKm;
  if (size) return size[0] * size[1];
  if (cellKm === undefined) return null;
  let bbox = req.grid.bbox ?? ip.bbox;
  if (!bbox) {
    const fc = JSON.parse(sitesBody) as { features: { geometry: { coordinates: number[] } }[] };
    let w = Infinity,
      s = Infinity,
      e = -Infinity,
      n = -Infinity;
    for (const f of fc.features) {
      const [x, y] = f.geometry.coordinates;
      w = Math.min(w, x);
      e = Math.max(e, x);
      s = Math.min(s, y);
      n = Math.max(n, y);
    }
    if (!(e >= w && n >= s)) return null;
    bbox = [w, s, e, n];
  }
  const k = kmPerDegree((bbox[1] + bbox[3]) / 2);
  const nx = Math.max(1, Math.ceil((Math.abs(bbox[2] - bbox[0]) * k.lon) / cellKm));
  const ny = Math.max(1, Math.ceil((Math.abs(bbox[3] - bbox[1]) * k.lat) / cellKm));
  return nx * ny;
}

/**
 * Validates a run request and queues it (or finds the cached run). The request names every data set it uses by
 * id: nothing is filled in from the demo or anywhere else. With `projectId`, each data set must be one the project
 * holds, the model's name is the project's name for it, and the run is listed under the project. Data sets that
 * lie far apart are reported in `warnings` (also by POST …/runs/check before starting).
 */
export async function submitRun(
  ctx: AppContext,
  body: unknown,
  client: string,
  projectId?: string,
): Promise<{ status: 200 | 202; body: Record<string, unknown> }> {
  requireRunInputs(body);
  const request = parseWith(runRequestSchema, body, 'run request', 'invalid_run');
  // The engines' own options are validated here too, so a mistake is a 422 now rather than a failed run later.
  requireDeclusterWithTransform(parseWith(interpolationOptionsSchema, request.interpolation, 'interpolation options', 'invalid_run'));
  if (request.maskToRegion && request.regions === undefined) {
    throw new InputError('maskToRegion needs a regions data set', [{ field: 'regions', problem: 'missing (maskToRegion is set)' }], 'invalid_run');
  }
  const crs = request.grid.crs ?? (request.interpolation as { crs?: string }).crs;
  if (crs !== undefined && !/^EPSG:\d{4,6}$/i.test(crs)) {
    throw new InputError(`grid.crs must be EPSG:nnnn, got "${crs}"`, [{ field: 'grid.crs', problem: 'expected EPSG:4326 or EPSG:nnnn' }], 'invalid_run');
  }
  const { datasets, hashes, names, bboxes } = await resolveRunDatasets(ctx, request, projectId);
  const warnings = farApartWarnings(bboxes);
  const cells = requestedCells(request, datasets[request.sites].body);
  if (cells !== null && cells > ctx.limits.maxGridCells) {
    throw new InputError(
      `the output grid would have ${cells.toLocaleString('en')} cells (limit maxGridCells = ${ctx.limits.maxGridCells.toLocaleString('en')}): use a larger cellKm, a smaller bbox or size`,
      [{ field: 'grid', problem: `at most ${ctx.limits.maxGridCells} cells per grid (limit maxGridCells)` }],
      'grid_too_large',
    );
  }
  if (!existsSync(ctx.workerFile)) {
    throw new InputError('runs are not available on this server: the run worker is not installed', [], 'runs_unavailable');
  }
  const cacheKey = sha256Hex(canonicalJson({ version: VERSION, request, inputs: hashes }));
  // "Client" for limits and fairness: the project a run is started through, else the remote address.
  const owner = projectId !== undefined ? `project:${projectId}` : client;
  const { id, cached, runToken } = await ctx.jobs.submit({ request, datasets, cacheKey, client: owner, cells, projectId });
  await ctx.store.linkRunDatasets(id, Object.keys(datasets));
  if (projectId !== undefined) await ctx.store.linkProjectRun(projectId, id);
  const snap = await ctx.jobs.snapshot(id);
  return {
    status: cached ? 200 : 202,
    // The run token (only for a run this request started) is needed to cancel it: DELETE with Authorization: Bearer.
    body: {
      id,
      status: snap?.status ?? 'queued',
      cached,
      ...(runToken !== undefined ? { runToken } : {}),
      url: `/api/runs/${id}`,
      events: `/api/runs/${id}/events`,
      datasets: names,
      warnings,
    },
  };
}

/** What a run needs before anything else: a sites data set and a model, each named (422 saying what to add). */
export function requireRunInputs(body: unknown): void {
  const o = body !== null && typeof body === 'object' && !Array.isArray(body) ? (body as Record<string, unknown>) : {};
  const missing: { field: string; problem: string }[] = [];
  if (o.sites === undefined || o.sites === null || o.sites === '') {
    missing.push({
      field: 'sites',
      problem: 'add heat-flow sites: upload a sites data set (CSV with longitude,latitude,heatFlowMWm2 or GeoJSON points) and name its id in "sites"',
    });
  }
  if (o.model === undefined || o.model === null || o.model === '') {
    missing.push({ field: 'model', problem: 'add a thermal model: upload a model data set (JSON) and name its id in "model", or give the model inline' });
  }
  if (missing.length > 0) {
    throw new InputError(`this run cannot start: ${missing.map((m) => m.problem).join('; ')}`, missing, 'run_needs_input');
  }
}

/** The data sets a validated request names, checked (exist, kind, in the project), with their hashes and bboxes. */
export async function resolveRunDatasets(ctx: AppContext, request: RunRequest, projectId?: string) {
  const datasets: Record<string, { kind: string; body: string }> = {};
  const hashes: Record<string, string> = {};
  const names: Record<string, { id: string; name: string | null }> = {};
  const bboxes: { role: string; id: string; name: string | null; bbox: [number, number, number, number] }[] = [];
  const need = async (role: string, id: string, kind: string): Promise<DatasetRecord & { body: string; name: string | null }> => {
    const rec = await ctx.store.getDataset(id);
    if (!rec) throw new InputError(`${role}: no data set with id "${id}"`, [{ field: role, problem: `data set ${id} not found` }], 'dataset_not_found');
    if (rec.kind !== kind)
      throw new InputError(
        `${role}: data set "${id}" holds ${rec.kind}, not ${kind}`,
        [{ field: role, problem: `expected a ${kind} data set, got ${rec.kind}` }],
        'wrong_dataset_kind',
      );
    let name = rec.title;
    if (projectId !== undefined) {
      const held = await ctx.store.getProjectDataset(projectId, id);
      if (!held) {
        throw new InputError(
          `${role}: data set "${id}" is not one of this project's data sets: upload it into the project (or choose one it holds)`,
          [{ field: role, problem: `data set ${id} is not in project ${projectId}` }],
          'dataset_not_in_project',
        );
      }
      name = held.name;
    }
    names[role] = { id, name };
    if (rec.bbox !== null) bboxes.push({ role, id, name, bbox: rec.bbox });
    return { ...rec, name };
  };
  for (const [role, kind] of Object.entries(ROLE_KINDS)) {
    const id = request[role as keyof typeof ROLE_KINDS];
    if (id === undefined) continue;
    const rec = await need(role, id, kind);
    datasets[id] = { kind: rec.kind, body: rec.body };
    hashes[role] = rec.contentHash;
  }
  // A drift from a grid data set (interpolation.trend = drift:<id>): its GeoTIFF goes to the run like any data set.
  const driftId = runTrend(String(request.interpolation.trend ?? '')).driftDataset;
  const drift = driftId === null ? null : await need('interpolation.trend', driftId, 'grid');
  if (drift !== null) [datasets[drift.id], hashes.drift] = [{ kind: 'grid', body: drift.body }, drift.contentHash];
  // The model: a data set id or inline JSON, validated here so a bad model never reaches a worker. A stored
  // model's name is its data set's name (the project's), so exports carry the name the user gave it.
  if (typeof request.model === 'string') {
    const rec = await need('model', request.model, 'model');
    const { model } = parseModelDocument(JSON.parse(rec.body), `model ${request.model}`);
    const { name: _own, ...content } = model as typeof model & { name?: unknown };
    datasets[request.model] = { kind: 'model', body: JSON.stringify(rec.name === null ? content : { name: rec.name, ...content }) };
    hashes.model = rec.contentHash;
    if (rec.name !== null) hashes.modelName = sha256Hex(rec.name);
  } else {
    request.model = parseModelDocument(request.model, 'model').model;
  }
  return { datasets, hashes, names, bboxes };
}

/** Great-circle distance between the nearest points of two lon/lat boxes, km (0 when they overlap); spherical Earth. */
export function bboxGapKm(a: [number, number, number, number], b: [number, number, number, number]): number {
  const lon = (x: [number, number, number, number]) => ({ w: x[0], e: x[2] });
  const clamp = (v: number, lo: number, hi: number) => Math.min(hi, Math.max(lo, v));
  // Nearest latitudes; nearest longitudes allowing for the antimeridian (the smaller of the two ways round).
  const latA = clamp((b[1] + b[3]) / 2, a[1], a[3]);
  const latB = clamp(latA, b[1], b[3]);
  const la = lon(a),
    lb = lon(b);
  let dLon = 0;
  if (lb.w > la.e) dLon = Math.min(lb.w - la.e, 360 - (lb.e - la.w));
  else if (la.w > lb.e) dLon = Math.min(la.w - lb.e, 360 - (la.e - lb.w));
  const toRad = Math.PI / 180;
  const p1 = latA * toRad,
    p2 = latB * toRad,
    dl = Math.max(0, dLon) * toRad;
  const h = Math.sin((p2 - p1) / 2) ** 2 + Math.cos(p1) * Math.cos(p2) * Math.sin(dl / 2) ** 2;
  return 2 * MEAN_EARTH_RADIUS_KM * Math.asin(Math.min(1, Math.sqrt(h)));
}

/** IUGG mean Earth radius R1 (Moritz 2000, Geodetic Reference System 1980), km. */
const MEAN_EARTH_RADIUS_KM = 6371.0088;
/** Data sets farther than this from the sites are reported: beyond any one regional study's reach, km. */
export const FAR_APART_KM = 300;

/** A warning for each data set that lies more than FAR_APART_KM from the sites. */
export function farApartWarnings(bboxes: { role: string; id: string; name: string | null; bbox: [number, number, number, number] }[]): string[] {
  const sites = bboxes.find((b) => b.role === 'sites');
  if (!sites) return [];
  const out: string[] = [];
  for (const b of bboxes) {
    if (b.role === 'sites') continue;
    const gap = bboxGapKm(sites.bbox, b.bbox);
    if (gap > FAR_APART_KM) {
      const label = (x: typeof b) => `${x.role} "${x.name ?? x.id}"`;
      out.push(
        `${label(b)} lie ${Math.round(gap).toLocaleString('en')} km from the ${label(sites)}: check that both describe the same region before relying on this run`,
      );
    }
  }
  return out;
}

/** The run named in the URL; 404 when there is none. */
async function getRun(ctx: AppContext, raw: string): Promise<RunRecord> {
  const id = idSchema.safeParse(raw);
  const rec = id.success ? await ctx.store.getRun(id.data) : null;
  if (!rec) throw notFound('run', raw, 'run_not_found');
  return rec;
}

/** Cancels a live run given its run token or its project's edit token (401 without a token, 403 with another). */
async function cancelRun(ctx: AppContext, rec: RunRecord, authorization: string | undefined): Promise<{ id: string; status: string }> {
  const live = ctx.jobs.live(rec.id);
  if (!live) {
    throw new InputError(`run ${rec.id} has already ended (${rec.status}); nothing to cancel`, [{ field: 'status', problem: rec.status }], 'run_finished');
  }
  // The run token returned when the run started, or the edit token of the project it was started through.
  const auth = await ctx.jobs.authorizeCancel(rec.id, bearerToken(authorization), (p) => ctx.store.getProjectTokenHash(p));
  if (auth === 'missing') {
    throw new InputError(
      "cancelling a run needs its run token (returned when it started) or its project's edit token: send Authorization: Bearer <token>",
      [{ field: 'authorization', problem: 'missing' }],
      'token_required',
    );
  }
  if (auth === 'wrong') {
    throw new InputError(
      "this token may not cancel this run: it is neither the run's token nor the edit token of the project that started it",
      [{ field: 'authorization', problem: 'wrong token' }],
      'forbidden',
    );
  }
  const after = await ctx.jobs.cancel(rec.id);
  return { id: rec.id, status: after?.status ?? 'cancelled' };
}

/** The run's progress as Server-Sent Events: its snapshot now, then each change, ending with its end. */
function runEvents(c: Context, ctx: AppContext, rec: RunRecord): Response {
  return streamSSE(c, async (stream) => {
    let seq = 0;
    // Each event is checked against the run contract (shared/schema/run.ts) before it leaves.
    const send = (s: RunSnapshot) => {
      const event = isTerminal(s.status) ? 'end' : 'progress';
      return stream.writeSSE({ event, id: String(seq++), data: JSON.stringify(RUN_EVENTS[event].parse(s)) });
    };
    const first = (await ctx.jobs.snapshot(rec.id))!;
    await send(first);
    if (isTerminal(first.status)) return;
    await new Promise<void>((resolve) => {
      let done = false;
      const stop = () => {
        if (done) return;
        done = true;
        unsubscribe();
        clearInterval(keepAlive);
        resolve();
      };
      const unsubscribe = ctx.jobs.subscribe(rec.id, (s) => {
        void send(s).then(() => {
          if (isTerminal(s.status)) stop();
        });
      });
      // A comment line now and then keeps proxies from closing a quiet stream.
      const keepAlive = setInterval(() => void stream.write(': keep-alive\n\n'), 15_000);
      stream.onAbort(stop);
      // The run may have ended between the first snapshot and the subscription.
      void ctx.jobs.snapshot(rec.id).then((now) => {
        if (now && isTerminal(now.status)) return send(now).then(stop);
      });
    });
  });
}

/** Every vector layer of a finished run in one GeoPackage (one table per layer). */
async function runGeoPackage(c: Context, ctx: AppContext, rec: RunRecord): Promise<Response> {
  if (rec.status !== 'done')
    throw new InputError(`the run is ${rec.status}; its GeoPackage appears when it is done`, [{ field: 'file', problem: 'not found' }], 'layer_not_found');
  const listed = (rec.layers as { name: string; title?: string; formats?: string[] }[]).filter((l) => l.formats?.includes('geojson'));
  const files = await Promise.all(
    listed.map(async (l) => ({ name: l.name, title: l.title ?? l.name, file: await ctx.store.getRunFile(rec.id, l.name, 'geojson') })),
  );
  const layers = files.filter((l) => l.file !== null).map((l) => ({ name: l.name, title: l.title, geojson: new TextDecoder().decode(l.file!.bytes) }));
  const provenance = (rec.summary as { provenance?: unknown } | null)?.provenance;
  const bytes = await ctx.compute.data.run<Uint8Array<ArrayBuffer>>({ kind: 'vectors-gpkg', layers, provenance }, ctx.limits.computeDeadlineSeconds * 1000);
  return c.body(bytes, 200, {
    'content-type': 'application/geopackage+sqlite3',
    'cache-control': 'private, max-age=3600',
    'content-disposition': `attachment; filename="run-${rec.id}.gpkg"`,
  });
}

/** One stored layer file of a run (<name>.tif | .png | .geojson | .csv), with its ETag (304 when unchanged). */
async function layerFile(c: Context, ctx: AppContext, rec: RunRecord, file: string): Promise<Response> {
  const m = /^(.+)\.([a-z]+)$/.exec(file);
  if (!m || !LAYER_EXTS.includes(m[2] as LayerExt)) {
    throw new InputError(
      `layer files are <name>.tif, .png, .geojson or .csv, got "${file}"`,
      [{ field: 'file', problem: 'unknown format' }],
      'bad_layer_format',
    );
  }
  const stored = await ctx.store.getRunFile(rec.id, m[1], m[2]);
  if (!stored) {
    const why = rec.status === 'done' ? `the run has no layer file ${file}` : `the run is ${rec.status}; layers appear when it is done`;
    throw new InputError(why, [{ field: 'file', problem: 'not found' }], 'layer_not_found');
  }
  const etag = `"${stored.hash}"`;
  const headers = {
    'content-type': stored.contentType,
    etag,
    'cache-control': 'private, max-age=3600',
    'content-disposition': `inline; filename="${m[1]}.${m[2]}"`,
  };
  if (c.req.header('if-none-match') === etag) return c.body(null, 304, headers);
  return c.body(new Uint8Array(stored.bytes), 200, headers);
}

export function runRoutes(app: Hono, ctx: AppContext): void {
  app.post('/api/runs', async (c) => {
    requireJsonType(c);
    const out = await submitRun(ctx, await jsonBody(c), clientAddress(c, ctx.trustedProxies));
    return c.json(out.body, out.status);
  });
  app.get('/api/runs/:id', async (c) => {
    const rec = await getRun(ctx, c.req.param('id'));
    return c.json(runView(rec, ctx.jobs.live(rec.id)));
  });
  app.delete('/api/runs/:id', async (c) => c.json(await cancelRun(ctx, await getRun(ctx, c.req.param('id')), c.req.header('authorization'))));
  app.get('/api/runs/:id/events', async (c) => runEvents(c, ctx, await getRun(ctx, c.req.param('id'))));
  app.get('/api/runs/:id/vectors.gpkg', async (c) => runGeoPackage(c, ctx, await getRun(ctx, c.req.param('id'))));
  app.get('/api/runs/:id/layers/:file', async (c) => layerFile(c, ctx, await getRun(ctx, c.req.param('id')), c.req.param('file')));
}
