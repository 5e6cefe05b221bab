import { Hono } from 'hono';
import { fileURLToPath } from 'node:url';
import type { Store } from './store/types.ts';
import type { TerrainTiles } from './terrain.ts';
import { startDemoRun } from './demo-run.ts';
import { resolveLimits, type Limits } from './limits.ts';
import { closeComputePools, createComputePools, createHeatJobs } from './runs/pools.ts';
import { securityHeaders } from './security.ts';
import { createRunQueue, type RunQueue } from './queue/select.ts';
import { RunGridCache } from './runs/grids.ts';
import { errorBody, parseTrustedProxies, type AppContext } from './routes/context.ts';
import { bodySizeGuard, errorHandler, urlGuard } from './routes/guards.ts';
import { healthRoutes } from './routes/health.ts';
import { configRoutes } from './routes/config.ts';
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
import { staticClientRoutes } from './routes/static-client.ts';
import { GeoTiffFile } from './io/geotiff.ts';
import { StoredBlobSource } from './store/blob-source.ts';

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

/** The default run worker module. */
export const RUN_WORKER_FILE = fileURLToPath(new URL('./workers/run-worker.ts', import.meta.url));

/** The operator's public base URL (no trailing slash), from the option or SUBTHERM_PUBLIC_URL; null when unset. */
function publicBaseOf(opts: AppOptions): string | null {
  const base = (opts.publicBaseUrl !== undefined ? opts.publicBaseUrl : (process.env.SUBTHERM_PUBLIC_URL ?? null))?.replace(/\/+$/, '') ?? null;
  if (base !== null && !/^https?:\/\/[^/?#\s]+(\/[^?#\s]*)?$/.test(base))
    throw new RangeError(`the public base URL must be http(s)://host[/path], got ${base}`);
  return base;
}

/** The access log of the options, or of SUBTHERM_ACCESS_LOG=1 (stdout); null for none. */
function accessLogOf(opts: AppOptions): ((line: string) => void) | null {
  if (opts.accessLog !== undefined) return opts.accessLog;
  return process.env.SUBTHERM_ACCESS_LOG === '1' ? (l: string) => process.stdout.write(l + '\n') : null;
}

/** What every request passes first: the access log (when on), security headers, the URL guard, the body limit. */
function useGuards(app: Hono, limits: Limits, accessLog: ((line: string) => void) | null): void {
  app.onError(errorHandler);
  if (accessLog) {
    app.use('*', async (c, next) => {
      const t0 = performance.now();
      await next();
      // The path only: no query string, no headers, no body (edit tokens never reach the log).
      accessLog(`${new Date().toISOString()} ${c.req.method} ${new URL(c.req.url).pathname} ${c.res.status} ${(performance.now() - t0).toFixed(1)}ms`);
    });
  }
  app.use('*', securityHeaders());
  app.use('*', urlGuard);
  app.use('/api/*', bodySizeGuard(limits));
}

/**
 * Raster-dem tiles of a run's raster layers, read window by window from the layer's stored COG: by byte range from
 * the store (its header once, then the compressed tiles a map tile samples), so any server process serves any layer.
 */
function mountGridTiles(app: Hono, store: Store, publicBaseUrl: string | null): void {
  app.route(
    '/api',
    gridTileRoutes({
      publicBaseUrl,
      openLayerFile: async (runId, layer) => {
        const file = await store.findRunFile(runId, layer, 'tif');
        if (!file) return null;
        return GeoTiffFile.openSource(new StoredBlobSource(store, file.hash, file.size), `${runId}/${layer}.tif`);
      },
    }),
  );
}

/**
 * Builds the Hono app (testable in-process with `app.request`). The returned app carries its run job system
 * (`app.jobs`): call `app.close()` to stop its worker pools. `app.ready` resolves when its start-up work against
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
  const compute = createComputePools(limits, opts.computeWorkerFile);
  const heatJobs = createHeatJobs(compute, limits);
  const trustedProxies = parseTrustedProxies((opts.trustedProxies ?? []).join(',') || process.env.SUBTHERM_TRUSTED_PROXIES);
  const ctx: AppContext = { store: opts.store, limits, jobs, grids: new RunGridCache(opts.store), workerFile, compute, heatJobs, trustedProxies };
  const publicBase = publicBaseOf(opts);

  useGuards(app, limits, accessLogOf(opts));
  const stopHealth = healthRoutes(app, ctx);
  configRoutes(app, limits, opts.terrain);
  openApiRoutes(app);
  datasetRoutes(app, ctx);
  runRoutes(app, ctx);
  inspectRoutes(app, ctx);
  projectRoutes(app, ctx);
  projectDatasetRoutes(app, ctx);
  heatFlowCorrectionRoutes(app, ctx);
  uncertaintyRoutes(app, ctx);
  mountGridTiles(app, opts.store, publicBase);
  resourceRoutes(app, ctx);
  app.all('/api/*', (c) => c.json(errorBody('not_found', `no such API route: ${c.req.method} ${new URL(c.req.url).pathname}`), 404));
  staticClientRoutes(app, opts.clientDir);

  // Start-up work against the store: interrupted runs marked failed, then the demo run submitted (when asked).
  const ready = jobs.ready.then(async () => {
    if (opts.demoRun) await startDemoRun(ctx);
  });

  /** Stops the run pool, the compute pools and the event-loop monitor. */
  const close = async () => {
    stopHealth();
    await Promise.all([jobs.close(), closeComputePools(compute)]);
  };
  return Object.assign(app, { jobs, limits, close, ready });
}
