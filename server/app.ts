import { Hono } from 'hono';
import { bodyLimit } from 'hono/body-limit';
import { existsSync, readFileSync, statSync } from 'node:fs';
import { extname, join, normalize } from 'node:path';
import { fileURLToPath } from 'node:url';
import { availableParallelism } from 'node:os';
import { InputError } from '../shared/errors.ts';
import { VERSION } from '../shared/version.ts';
import { httpStatusOf, retryAfterSecondsOf } from './http-status.ts';
import { CAUTION } from '../shared/caution.ts';
import type { Store } from './store/types.ts';
import type { TerrainTiles } from './terrain.ts';
import { TERRAIN_MAX_ZOOM, TERRAIN_MIN_ZOOM } from './terrain.ts';
import { DEMO_DATASETS, DEMO_PROJECT_ID } from './demo.ts';
import { startDemoRun } from './demo-run.ts';
import { limitsView, resolveLimits, type Limits } from './limits.ts';
import { monitorEventLoopDelay } from 'node:perf_hooks';
import { ComputePool } from './runs/compute.ts';
import { HeatJobs } from './runs/heat-jobs.ts';
import { securityHeaders } from './security.ts';
import { createRunQueue, queueHealth, type RunQueue } from './queue/select.ts';
import { RunGridCache } from './runs/grids.ts';
import { errorBody, parseTrustedProxies, type AppContext } from './routes/context.ts';
import { datasetRoutes } from './routes/datasets.ts';
import { runRoutes } from './routes/runs.ts';
import { inspectRoutes } from './routes/inspect.ts';
import { projectRoutes } from './routes/projects.ts';
import { projectDatasetRoutes } from './routes/project-datasets.ts';
import { heatFlowCorrectionRoutes } from './routes/heat-flow-corrections.ts';
import { uncertaintyRoutes } from './routes/uncertainty.ts';
import { openApiRoutes } from './routes/openapi.ts';
import { gridTileRoutes } from './routes/grid-tiles.ts';
import { resourceRoutes } from './routes/resource.ts';
import { GeoTiffFile } from './io/geotiff.ts';
import { LayerFiles } from './io/layer-files.ts';

export interface AppOptions {
  store: Store;
  terrain: TerrainTiles | null;
  /** Folder of the built client (index.html and assets); null serves a notice page. */
  clientDir: string | null;
  /** Limits (each also settable by environment variable: see limits.ts). */
  limits?: Partial<Limits>;
  /** Module of the run worker (default server/workers/run-worker.ts). */
  runWorkerFile?: string;
  /** Module of the compute worker (default server/workers/compute-worker.ts). */
  computeWorkerFile?: string;
  /** One line per request (method, path without query, status, ms); default off, or on with SUBTHERM_ACCESS_LOG=1. */
  accessLog?: ((line: string) => void) | null;
  /** Start the demo project's default run in the background (what `subtherm serve` does unless SUBTHERM_DEMO_RUN=0). */
  demoRun?: boolean;
  /**
   * The URL the server is reached at from outside (e.g. https://maps.example.org/subtherm), used where a response
   * must carry an absolute URL (tile templates). Default SUBTHERM_PUBLIC_URL, else URLs stay relative to the page.
   * Never taken from the request's Host header.
   */
  publicBaseUrl?: string | null;
  /** Reverse proxies whose X-Forwarded-For is believed (default SUBTHERM_TRUSTED_PROXIES, comma-separated). */
  trustedProxies?: string[];
  /** redis://… of a run queue shared with other servers and `subtherm worker` processes; absent: this server's threads. */
  queueUrl?: string | null;
  /** Key prefix of the run queue in Redis (default `subtherm:`). */
  queuePrefix?: string;
}

/** True for SQLite's "database or disk is full" (SQLITE_FULL) and the file system's "no space left" (ENOSPC). */
export function isStorageFull(err: unknown): boolean {
  const e = err as { code?: unknown; message?: unknown } | null;
  return (
    e !== null &&
    typeof e === 'object' &&
    (e.code === 'SQLITE_FULL' || e.code === 'ENOSPC' || (typeof e.message === 'string' && /database or disk is full/.test(e.message)))
  );
}

/** The default run worker module. */
export const RUN_WORKER_FILE = fileURLToPath(new URL('./workers/run-worker.ts', import.meta.url));

const CONTENT_TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.json': 'application/json',
  '.png': 'image/png',
  '.svg': 'image/svg+xml',
  '.woff2': 'font/woff2',
  '.map': 'application/json',
};

/**
 * Builds the Hono app (testable in-process with `app.request`). The returned app carries its run job system
 * (`app.jobs`): call `app.jobs.close()` to stop the worker pool. `app.ready` resolves when its start-up work against
 * the store is done.
 */
export function createApp(opts: AppOptions): Hono & { jobs: RunQueue; limits: Limits; close: () => Promise<void>; ready: Promise<void> } {
  const app = new Hono();
  const limits = resolveLimits(opts.limits);
  const workerFile = opts.runWorkerFile ?? RUN_WORKER_FILE;
  const jobs = createRunQueue({
    queueUrl: opts.queueUrl,
    queuePrefix: opts.queuePrefix,
    store: opts.store,
    workerFile,
    concurrency: limits.runConcurrency,
    maxQueuedPerClient: limits.maxQueuedRunsPerClient,
    maxQueuedServer: limits.maxQueuedRunsServer,
    maxRunWork: limits.maxRunCellRealizations,
    maxQueuedWorkPerClient: limits.maxQueuedWorkPerClient,
    maxQueuedWorkServer: limits.maxQueuedWorkServer,
    wallClockMs: limits.runWallClockSeconds * 1000,
  });
  // Four pools, so long work never holds short work behind it: short column bands (a map click) on threads of
  // normal priority; long columns and sections, heat-in-place jobs, and a run's spread and probability layers, each
  // on a thread of lowered priority.
  const compute = {
    short: new ComputePool({
      name: 'short column',
      threads: Math.min(2, availableParallelism()),
      maxQueue: limits.maxComputeQueue,
      queueLimit: 'maxComputeQueue',
      deadlineLimit: 'computeDeadlineSeconds',
      keepWarm: true,
      workerFile: opts.computeWorkerFile,
    }),
    long: new ComputePool({
      name: 'long column and section',
      threads: 1,
      maxQueue: limits.maxLongComputeQueue,
      queueLimit: 'maxLongComputeQueue',
      deadlineLimit: 'computeDeadlineSeconds',
      niceness: 10,
      workerFile: opts.computeWorkerFile,
    }),
    jobs: new ComputePool({
      name: 'heat-in-place',
      threads: 1,
      maxQueue: limits.maxHeatInPlaceJobsServer,
      queueLimit: 'maxHeatInPlaceJobsServer',
      deadlineLimit: 'heatInPlaceDeadlineSeconds',
      niceness: 10,
      workerFile: opts.computeWorkerFile,
    }),
    // A layer costs about what the run's own Monte Carlo did, so it has the run's wall-clock limit.
    layers: new ComputePool({
      name: 'spread and probability layer',
      threads: 1,
      maxQueue: limits.maxLongComputeQueue,
      queueLimit: 'maxLongComputeQueue',
      deadlineLimit: 'runWallClockSeconds',
      niceness: 10,
      workerFile: opts.computeWorkerFile,
    }),
  };
  const heatJobs = new HeatJobs({
    pool: compute.jobs,
    concurrency: 1,
    deadlineMs: limits.heatInPlaceDeadlineSeconds * 1000,
    maxPerClient: limits.maxHeatInPlaceJobsPerClient,
    maxServer: limits.maxHeatInPlaceJobsServer,
  });
  const trustedProxies = parseTrustedProxies((opts.trustedProxies ?? []).join(',') || process.env.SUBTHERM_TRUSTED_PROXIES);
  const ctx: AppContext = { store: opts.store, limits, jobs, grids: new RunGridCache(opts.store), workerFile, compute, heatJobs, trustedProxies };
  const publicBase = (opts.publicBaseUrl !== undefined ? opts.publicBaseUrl : (process.env.SUBTHERM_PUBLIC_URL ?? null))?.replace(/\/+$/, '') ?? null;
  if (publicBase !== null && !/^https?:\/\/[^/?#\s]+(\/[^?#\s]*)?$/.test(publicBase))
    throw new RangeError(`the public base URL must be http(s)://host[/path], got ${publicBase}`);
  // Event-loop delay (Node's histogram, 10 ms resolution), reported by /api/health over a rolling window.
  const loopDelay = monitorEventLoopDelay({ resolution: 10 });
  loopDelay.enable();
  let loopWindowStart = Date.now();
  let lastWindow: { p50: number; p99: number; max: number } | null = null;
  const loopTimer = setInterval(() => {
    lastWindow = { p50: loopDelay.percentile(50) / 1e6, p99: loopDelay.percentile(99) / 1e6, max: loopDelay.max / 1e6 };
    loopDelay.reset();
    loopWindowStart = Date.now();
  }, 60_000);
  loopTimer.unref();
  const accessLog =
    opts.accessLog !== undefined ? opts.accessLog : process.env.SUBTHERM_ACCESS_LOG === '1' ? (l: string) => process.stdout.write(l + '\n') : null;

  app.onError((err, c) => {
    if (isStorageFull(err)) {
      // Each write is one transaction, so nothing was half written; reads go on being served.
      console.error(`[${new Date().toISOString()}] ${c.req.method} ${new URL(c.req.url).pathname}: storage full (${err.message})`);
      return c.json(
        errorBody(
          'insufficient_storage',
          'the server has no room left to store this (its disk or database is full); nothing was saved. Reading works as before; tell the operator.',
        ),
        507,
      );
    }
    if (err instanceof InputError) {
      const status = httpStatusOf(err.code);
      const headers: Record<string, string> = status === 401 ? { 'www-authenticate': 'Bearer realm="subtherm project"' } : {};
      const retry = retryAfterSecondsOf(err.code);
      if (retry !== null) headers['retry-after'] = String(retry);
      return c.json(errorBody(err.code, err.message, err.details), status, headers);
    }
    console.error(`[${new Date().toISOString()}] ${c.req.method} ${new URL(c.req.url).pathname}: ${err.stack ?? err.message}`);
    return c.json(errorBody('internal', 'internal server error'), 500);
  });

  if (accessLog) {
    app.use('*', async (c, next) => {
      const t0 = performance.now();
      await next();
      // The path only: no query string, no headers, no body (edit tokens never reach the log).
      accessLog(`${new Date().toISOString()} ${c.req.method} ${new URL(c.req.url).pathname} ${c.res.status} ${(performance.now() - t0).toFixed(1)}ms`);
    });
  }
  app.use('*', securityHeaders());
  // A path with malformed percent-encoding (e.g. /%E0%A4%A) cannot name anything: 400 before any route sees it.
  app.use('*', async (c, next) => {
    const raw = c.req.url;
    const path = raw.slice(raw.indexOf('/', raw.indexOf('//') + 2)).split('?')[0];
    try {
      decodeURIComponent(path);
    } catch {
      return c.json(
        errorBody('bad_url', 'the URL has malformed percent-encoding', [
          { field: 'path', problem: 'each % must be followed by two hex digits forming valid UTF-8' },
        ]),
        400,
      );
    }
    await next();
  });
  app.use(
    '/api/*',
    bodyLimit({
      maxSize: limits.maxBodyBytes,
      onError: (c) =>
        c.json(
          errorBody(
            'body_too_large',
            `the request body is larger than ${limits.maxBodyBytes} bytes (${(limits.maxBodyBytes / 1048576).toFixed(0)} MB), the server's limit`,
            [{ field: '(body)', problem: `at most ${limits.maxBodyBytes} bytes` }],
          ),
          413,
        ),
    }),
  );

  app.get('/api/health', (c) => {
    const ms = (ns: number) => Math.round((ns / 1e6) * 100) / 100;
    const current = { p50: ms(loopDelay.percentile(50)), p99: ms(loopDelay.percentile(99)), max: ms(loopDelay.max) };
    return c.json({
      ok: true,
      version: VERSION,
      store: opts.store.kind,
      // Runs execute in this server's worker threads, or on the shared Redis queue's workers.
      ...queueHealth(jobs, limits.runConcurrency),
      // Delay of the request thread's event loop since the window began (the previous full minute beside it).
      eventLoopDelayMs: { ...current, windowStartedAt: new Date(loopWindowStart).toISOString(), previousMinute: lastWindow },
      runs: jobs.counts(),
      computeTasks: { short: compute.short.load(), long: compute.long.load(), heatInPlace: heatJobs.inFlight(), layers: compute.layers.load() },
    });
  });

  app.get('/api/limits', (c) => c.json(limitsView(limits)));

  app.get('/api/config', (c) =>
    c.json({
      version: VERSION,
      caution: CAUTION,
      demo: {
        name: 'Orrindel Massif',
        invented: true,
        projectId: DEMO_PROJECT_ID,
        datasets: Object.fromEntries(DEMO_DATASETS.map((d) => [d.kind, d.id])),
      },
      terrain: opts.terrain
        ? {
            tiles: '/api/terrain/{z}/{x}/{y}.png',
            bounds: opts.terrain.bbox,
            minzoom: TERRAIN_MIN_ZOOM,
            maxzoom: TERRAIN_MAX_ZOOM,
            encoding: 'mapbox',
            tileSize: 256,
          }
        : null,
    }),
  );

  openApiRoutes(app);

  // Data sets are listed through the project that holds them.
  app.get('/api/datasets', (c) =>
    c.json(
      errorBody('listed_per_project', 'data sets are listed per project: GET /api/projects/{id}/datasets', [
        { field: 'path', problem: 'use /api/projects/{id}/datasets' },
      ]),
      410,
    ),
  );
  datasetRoutes(app, ctx);

  app.get('/api/datasets/:id', async (c) => {
    const rec = await opts.store.getDataset(c.req.param('id'));
    if (!rec) throw new InputError(`no data set with id "${c.req.param('id')}"`, [{ field: 'id', problem: 'not found' }], 'not_found');
    const type = rec.kind === 'model' ? 'application/json' : 'application/geo+json';
    return c.body(rec.body, 200, { 'content-type': type, etag: `"${rec.contentHash}"` });
  });

  app.get('/api/terrain/:z/:x/:y', (c) => {
    const { z, x } = c.req.param();
    const yFile = c.req.param('y');
    const m = /^(\d+)\.png$/.exec(yFile);
    const zi = Number(z),
      xi = Number(x);
    if (!m || !/^\d+$/.test(z) || !/^\d+$/.test(x)) {
      throw new InputError(
        'terrain tiles are /api/terrain/{z}/{x}/{y}.png with integer z, x, y',
        [{ field: 'path', problem: `got ${z}/${x}/${yFile}` }],
        'bad_tile',
      );
    }
    const png = opts.terrain?.tile(zi, xi, Number(m[1])) ?? null;
    if (!png)
      throw new InputError(
        `no terrain tile ${z}/${x}/${m[1]}`,
        [{ field: 'tile', problem: `outside the terrain or zoom ${TERRAIN_MIN_ZOOM}–${TERRAIN_MAX_ZOOM}` }],
        'tile_not_found',
      );
    return c.body(new Uint8Array(png), 200, { 'content-type': 'image/png', 'cache-control': 'public, max-age=3600' });
  });

  runRoutes(app, ctx);
  inspectRoutes(app, ctx);
  projectRoutes(app, ctx);
  projectDatasetRoutes(app, ctx);
  heatFlowCorrectionRoutes(app, ctx);
  uncertaintyRoutes(app, ctx);
  // Raster-dem tiles of a run's raster layers, read window by window from a local copy of the layer's stored COG.
  const layerFiles = new LayerFiles();
  app.route(
    '/api',
    gridTileRoutes({
      publicBaseUrl: publicBase,
      openLayerFile: async (runId, layer) => {
        const file = await opts.store.getRunFile(runId, layer, 'tif');
        if (!file) return null;
        return GeoTiffFile.open(await layerFiles.path(file.hash, file.bytes));
      },
    }),
  );
  // Heat in place over a finished run: jobs on the worker pool.
  resourceRoutes(app, ctx);

  app.all('/api/*', (c) => c.json(errorBody('not_found', `no such API route: ${c.req.method} ${new URL(c.req.url).pathname}`), 404));

  // Every other path serves the client: a built asset when it exists, else the map page (so links open the map).
  app.get('*', (c) => {
    if (!opts.clientDir) {
      return c.html('<!doctype html><title>subtherm</title><p>The web client is not built yet: run <code>npm run build</code>, or <code>npm start</code>.</p>');
    }
    const path = decodeURIComponent(new URL(c.req.url).pathname);
    const rel = normalize(path).replace(/^(\.\.[/\\])+/, '');
    const file = join(opts.clientDir, rel);
    if (file.startsWith(opts.clientDir) && rel !== '/' && existsSync(file) && statSync(file).isFile()) {
      const type = CONTENT_TYPES[extname(file)] ?? 'application/octet-stream';
      const immutable = rel.startsWith('/assets/');
      return c.body(readFileSync(file), 200, { 'content-type': type, 'cache-control': immutable ? 'public, max-age=31536000, immutable' : 'no-cache' });
    }
    return c.body(readFileSync(join(opts.clientDir, 'index.html')), 200, { 'content-type': CONTENT_TYPES['.html'], 'cache-control': 'no-cache' });
  });

  // Start-up work against the store: interrupted runs marked failed, then the demo run submitted (when asked).
  const ready = jobs.ready.then(async () => {
    if (opts.demoRun) await startDemoRun(ctx);
  });

  /** Stops the run pool, the compute pools and the event-loop monitor. */
  const close = async () => {
    clearInterval(loopTimer);
    loopDelay.disable();
    await Promise.all([jobs.close(), compute.short.close(), compute.long.close(), compute.jobs.close(), compute.layers.close(), layerFiles.close()]);
  };
  return Object.assign(app, { jobs, limits, close, ready });
}
