/**
 * The server's resource limits, each with a default, an environment variable, a createApp option, units and a
 * description (GET /api/limits lists them all, with the model bounds of shared/schema/model.ts). Every limit is
 * checked before work starts; a request over one gets a 4xx JSON error whose details name the limit and the value.
 */
import { MODEL_BOUNDS } from '../shared/schema/model.ts';

export interface Limits {
  /** Largest request body, bytes (413 above it). */
  maxBodyBytes: number;
  /** Most features in one data set (413 above it). */
  maxFeatures: number;
  /** Most cells in one run's output grid (422 above it). */
  maxGridCells: number;
  /** Most cells × realizations in one run (422 above it). */
  maxRunCellRealizations: number;
  /** Most runs queued or running for one client at a time (429 above it). */
  maxQueuedRunsPerClient: number;
  /** Most runs queued or running on the whole server (503 above it). */
  maxQueuedRunsServer: number;
  /** Most cells × realizations queued or running for one client (429 above it). */
  maxQueuedWorkPerClient: number;
  /** Most cells × realizations queued or running on the whole server (503 above it). */
  maxQueuedWorkServer: number;
  /** Wall-clock time a run may take once started, seconds (the run then ends `failed`, naming this limit). */
  runWallClockSeconds: number;
  /** Runs executing at the same time (worker threads). */
  runConcurrency: number;
  /** Most cells × realizations in one heat-in-place job (422 above it). */
  maxHeatInPlaceCellRealizations: number;
  /** Most realizations in one heat-in-place job (422 above it). */
  maxHeatInPlaceRealizations: number;
  /** Most vertices in a heat-in-place polygon or zone set (422 above it). */
  maxPolygonVertices: number;
  /** Wall-clock time of one heat-in-place job, seconds, waiting included (the job then fails, naming this limit). */
  heatInPlaceDeadlineSeconds: number;
  /** Most heat-in-place jobs queued or running for one client (429 above it). */
  maxHeatInPlaceJobsPerClient: number;
  /** Most heat-in-place jobs queued or running on the server (429 above it). */
  maxHeatInPlaceJobsServer: number;
  /** Wall-clock time of a column band or a section on the worker pool, seconds, waiting included (503 beyond). */
  computeDeadlineSeconds: number;
  /** Short column bands waiting for a worker thread (503 server_busy, with Retry-After, above it). */
  maxComputeQueue: number;
  /** Long column bands and sections waiting for their worker thread (503 server_busy, with Retry-After, above it). */
  maxLongComputeQueue: number;
  /** Largest saved project state, bytes of JSON (413 above it). */
  maxProjectStateBytes: number;
  /** Deepest nesting of a saved project state (422 beyond it). */
  maxJsonDepth: number;
  /** Bytes one project may hold: its data sets and its terrain (413 above it). */
  maxProjectStorageBytes: number;
  /** Largest terrain GeoTIFF upload, bytes (413 above it). */
  maxTerrainBytes: number;
}

export const DEFAULT_LIMITS: Readonly<Limits> = Object.freeze({
  maxBodyBytes: 50 * 1024 * 1024,
  maxFeatures: 200_000,
  maxGridCells: 25_000_000,
  // Measured on the reference machine (2 cores, Node 20) with the demo sites and model: a run costs about 7.6 s of
  // CPU plus 16.5 µs per cell × realization (10,000 cells × 20: 10.9 s of CPU; 20,000 cells × 100: 40.6 s), on
  // one worker thread. 5×10⁷ is then about 830 s of CPU: within the 1800 s run wall-clock limit with room to
  // spare for a busy machine (the measurements ran at a load average of 25–27, where the same runs took 161 s
  // and 563 s of wall time; 5×10⁸ would have needed over two hours of CPU).
  maxRunCellRealizations: 50_000_000,
  maxQueuedRunsPerClient: 5,
  maxQueuedRunsServer: 50,
  maxQueuedWorkPerClient: 1_000_000_000,
  maxQueuedWorkServer: 4_000_000_000,
  runWallClockSeconds: 1800,
  runConcurrency: 1,
  maxHeatInPlaceCellRealizations: 20_000_000,
  maxHeatInPlaceRealizations: 2000,
  maxPolygonVertices: 100_000,
  heatInPlaceDeadlineSeconds: 120,
  maxHeatInPlaceJobsPerClient: 2,
  maxHeatInPlaceJobsServer: 8,
  computeDeadlineSeconds: 120,
  maxComputeQueue: 256,
  maxLongComputeQueue: 16,
  maxProjectStateBytes: 2 * 1024 * 1024,
  maxJsonDepth: 64,
  maxProjectStorageBytes: 200 * 1024 * 1024,
  maxTerrainBytes: 40 * 1024 * 1024,
});

/** Environment variable of each limit. */
export const LIMIT_ENV: Record<keyof Limits, string> = {
  maxBodyBytes: 'SUBTHERM_MAX_BODY_BYTES',
  maxFeatures: 'SUBTHERM_MAX_FEATURES',
  maxGridCells: 'SUBTHERM_MAX_GRID_CELLS',
  maxRunCellRealizations: 'SUBTHERM_MAX_RUN_CELL_REALIZATIONS',
  maxQueuedRunsPerClient: 'SUBTHERM_MAX_QUEUED_RUNS',
  maxQueuedRunsServer: 'SUBTHERM_MAX_QUEUED_RUNS_SERVER',
  maxQueuedWorkPerClient: 'SUBTHERM_MAX_QUEUED_WORK',
  maxQueuedWorkServer: 'SUBTHERM_MAX_QUEUED_WORK_SERVER',
  runWallClockSeconds: 'SUBTHERM_RUN_WALL_CLOCK_S',
  runConcurrency: 'SUBTHERM_RUN_CONCURRENCY',
  maxHeatInPlaceCellRealizations: 'SUBTHERM_MAX_HIP_CELL_REALIZATIONS',
  maxHeatInPlaceRealizations: 'SUBTHERM_MAX_HIP_REALIZATIONS',
  maxPolygonVertices: 'SUBTHERM_MAX_POLYGON_VERTICES',
  heatInPlaceDeadlineSeconds: 'SUBTHERM_HIP_DEADLINE_S',
  maxHeatInPlaceJobsPerClient: 'SUBTHERM_MAX_HIP_JOBS',
  maxHeatInPlaceJobsServer: 'SUBTHERM_MAX_HIP_JOBS_SERVER',
  computeDeadlineSeconds: 'SUBTHERM_COMPUTE_DEADLINE_S',
  maxComputeQueue: 'SUBTHERM_MAX_COMPUTE_QUEUE',
  maxLongComputeQueue: 'SUBTHERM_MAX_LONG_COMPUTE_QUEUE',
  maxProjectStateBytes: 'SUBTHERM_MAX_PROJECT_BYTES',
  maxJsonDepth: 'SUBTHERM_MAX_JSON_DEPTH',
  maxProjectStorageBytes: 'SUBTHERM_MAX_PROJECT_STORAGE_BYTES',
  maxTerrainBytes: 'SUBTHERM_MAX_TERRAIN_BYTES',
};

/** Units of each limit as /api/limits states them. */
export const LIMIT_UNITS: Record<keyof Limits, string> = {
  maxBodyBytes: 'bytes',
  maxFeatures: 'features',
  maxGridCells: 'cells',
  maxRunCellRealizations: 'cells × realizations',
  maxQueuedRunsPerClient: 'runs',
  maxQueuedRunsServer: 'runs',
  maxQueuedWorkPerClient: 'cells × realizations',
  maxQueuedWorkServer: 'cells × realizations',
  runWallClockSeconds: 's',
  runConcurrency: 'threads',
  maxHeatInPlaceCellRealizations: 'cells × realizations',
  maxHeatInPlaceRealizations: 'realizations',
  maxPolygonVertices: 'vertices',
  heatInPlaceDeadlineSeconds: 's',
  maxHeatInPlaceJobsPerClient: 'jobs',
  maxHeatInPlaceJobsServer: 'jobs',
  computeDeadlineSeconds: 's',
  maxComputeQueue: 'tasks',
  maxLongComputeQueue: 'tasks',
  maxProjectStateBytes: 'bytes',
  maxJsonDepth: 'levels',
  maxProjectStorageBytes: 'bytes',
  maxTerrainBytes: 'bytes',
};

/**
 * Limits from (in order of precedence) explicit options, the environment, the defaults. A malformed environment
 * value is an error at start-up rather than a silent default.
 */
export function resolveLimits(options: Partial<Limits> = {}, env: Record<string, string | undefined> = process.env): Limits {
  const out = { ...DEFAULT_LIMITS };
  for (const key of Object.keys(DEFAULT_LIMITS) as (keyof Limits)[]) {
    const fromOpt = options[key];
    const raw = env[LIMIT_ENV[key]];
    let v: number = DEFAULT_LIMITS[key];
    if (fromOpt !== undefined) v = fromOpt;
    else if (raw !== undefined && raw.trim() !== '') v = Number(raw);
    if (!(Number.isInteger(v) && v >= 1)) {
      throw new RangeError(`limit ${key} (${LIMIT_ENV[key]}) must be a positive integer, got ${fromOpt ?? raw}`);
    }
    out[key] = v;
  }
  return out;
}

/** GET /api/limits: every server limit and every model bound, with units and how to change it. */
export function limitsView(limits: Limits) {
  return {
    limits: (Object.keys(DEFAULT_LIMITS) as (keyof Limits)[]).map((name) => ({ name, value: limits[name], units: LIMIT_UNITS[name], env: LIMIT_ENV[name] })),
    model: MODEL_BOUNDS,
  };
}
