/**
 * The one table from InputError problem codes (shared/errors.ts) to HTTP statuses. A code not listed is a 400.
 * 4xx only: every code here is the caller's to fix (or, for 503, to retry later); faults of the server are 500s
 * rendered elsewhere.
 */
const STATUS_BY_CODE: Readonly<Record<string, number>> = {
  // 400: the request cannot be read as sent.
  bad_json: 400,
  bad_url: 400,
  bad_id: 400,
  bad_query: 400,
  bad_request: 400,
  bad_tile: 400,
  bad_layer_format: 400,
  empty_body: 400,
  malformed_csv: 400,
  bad_geojson: 400,
  empty_dataset: 400,
  missing_field: 400,
  invalid_options: 400,
  invalid_polygon: 400,
  invalid_zones: 400,
  invalid_override: 400,
  // 401/403: the edit token.
  unauthorized: 401,
  token_required: 401,
  forbidden: 403,
  // 404: no such thing.
  not_found: 404,
  dataset_not_found: 404,
  unknown_dataset: 404,
  run_not_found: 404,
  project_not_found: 404,
  revision_not_found: 404,
  layer_not_found: 404,
  job_not_found: 404,
  tile_not_found: 404,
  terrain_not_found: 404,
  // 409: the thing exists but is in the wrong state.
  run_finished: 409,
  run_not_done: 409,
  run_without_grid: 409,
  run_without_realizations: 409,
  name_taken: 409,
  dataset_changed: 409,
  cancelled: 409,
  // 413/415: size and media type.
  too_many_features: 413,
  state_too_large: 413,
  body_too_large: 413,
  project_quota_exceeded: 413,
  bad_csv: 415,
  unsupported_media_type: 415,
  not_geotiff: 415,
  terrain_too_large: 413,
  too_large: 413,
  // 422: readable, but not valid.
  invalid_request: 422,
  invalid_run: 422,
  invalid_model: 422,
  invalid_column: 422,
  missing_heat_flow: 422,
  invalid_section: 422,
  invalid_features: 422,
  invalid_wells: 422,
  invalid_project: 422,
  invalid_dataset_change: 422,
  wrong_kind: 422,
  wrong_dataset_kind: 422,
  nothing_to_correct: 422,
  dataset_not_in_project: 422,
  run_needs_input: 422,
  grid_too_large: 422,
  run_too_large: 422,
  over_limit: 422,
  no_data_here: 422,
  swapped_lon_lat: 422,
  bad_crs: 422,
  crs_needs_datum_grid: 422,
  no_crs: 422,
  bad_geotiff: 422,
  truncated_geotiff: 422,
  bad_geopackage: 422,
  bad_shapefile: 422,
  bad_geometry: 422,
  no_features: 422,
  choose_layer: 422,
  unknown_layer: 422,
  projected_layer: 422,
  too_deep: 422,
  state_too_deep: 422,
  // 429/503: come back later.
  too_many_runs: 429,
  too_much_work: 429,
  too_many_jobs: 429,
  server_busy: 503,
  // Every deadline (a column band, a section, a heat-in-place job, a run's spread or probability layer): the limit
  // counts time spent waiting for a thread, so the same request can finish when the server is less busy.
  deadline_exceeded: 503,
  runs_unavailable: 503,
  shutting_down: 503,
};

/** The HTTP status of an InputError's problem code. */
export function httpStatusOf(code: string): 400 | 401 | 403 | 404 | 409 | 413 | 415 | 422 | 429 | 503 {
  return (Object.hasOwn(STATUS_BY_CODE, code) ? STATUS_BY_CODE[code] : 400) as ReturnType<typeof httpStatusOf>;
}

/**
 * Seconds a client should wait before trying again (the Retry-After header, RFC 9110 §10.2.3) for the codes that
 * mean "come back later"; null for every other code. A full queue clears in seconds; a deadline met under load or
 * a full allowance of runs or jobs takes longer to free.
 */
const RETRY_AFTER_BY_CODE: Readonly<Record<string, number>> = {
  server_busy: 2,
  deadline_exceeded: 10,
  runs_unavailable: 10,
  shutting_down: 10,
  too_many_runs: 10,
  too_much_work: 10,
  too_many_jobs: 5,
};

/** The Retry-After seconds of an InputError's problem code, or null when retrying the same request cannot help. */
export function retryAfterSecondsOf(code: string): number | null {
  return Object.hasOwn(RETRY_AFTER_BY_CODE, code) ? RETRY_AFTER_BY_CODE[code] : null;
}
