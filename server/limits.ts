/**
 * The server's resource limits, each with a default, an environment variable and a createApp option. A request
 * over a limit gets a 4xx JSON error that names the limit and how to stay under it.
 */
export interface Limits {
  /** Largest request body, bytes (413 above it). */
  maxBodyBytes: number;
  /** Most features in one data set (413 above it). */
  maxFeatures: number;
  /** Most cells in one run's output grid (422 above it). */
  maxGridCells: number;
  /** Most runs queued or running for one client address at a time (429 above it). */
  maxQueuedRunsPerClient: number;
  /** Runs executing at the same time (worker threads). */
  runConcurrency: number;
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
  maxQueuedRunsPerClient: 5,
  runConcurrency: 1,
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
  maxQueuedRunsPerClient: 'SUBTHERM_MAX_QUEUED_RUNS',
  runConcurrency: 'SUBTHERM_RUN_CONCURRENCY',
  maxProjectStateBytes: 'SUBTHERM_MAX_PROJECT_BYTES',
  maxJsonDepth: 'SUBTHERM_MAX_JSON_DEPTH',
  maxProjectStorageBytes: 'SUBTHERM_MAX_PROJECT_STORAGE_BYTES',
  maxTerrainBytes: 'SUBTHERM_MAX_TERRAIN_BYTES',
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
