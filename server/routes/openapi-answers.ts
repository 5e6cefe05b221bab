/** JSON Schemas (2020-12) of answers that no zod schema describes, for the OpenAPI document (openapi.ts). */
import { CLIENT_ERROR_ANSWERS } from './guards.ts';

type ClientErrorStatus = keyof typeof CLIENT_ERROR_ANSWERS;
/** Statuses the HTTP server answers before any route (guards.ts answerClientError): possible on every operation. */
export const CLIENT_ERROR_STATUSES = Object.keys(CLIENT_ERROR_ANSWERS).map(Number) as ClientErrorStatus[];

/** What the server's own answer with `status` means ('' when it has none). */
export function clientErrorText(status: number): string {
  const a = (CLIENT_ERROR_ANSWERS as Record<number, { code: string; when: string } | undefined>)[status];
  return a ? `${a.code} when ${a.when} (answered by the server before any route; the connection then closes)` : '';
}

/** components.responses: one entry per status of the server's own answers, referred to from every operation. */
export function clientErrorResponses(): Record<string, unknown> {
  const content = { 'application/json': { schema: { $ref: '#/components/schemas/Error' } } };
  return Object.fromEntries(CLIENT_ERROR_STATUSES.map((s) => [`ClientError${s}`, { description: clientErrorText(s), content }]));
}

/** A run's layer in GET /api/runs/:id, with the names of the thermal products (shared/products/names.ts). */
export const RUN_LAYER_TEXT =
  'a layer: name, title, units, legend (a ramp or classes, with units and an optional note) and formats with their URLs. Names: heat-flow, ' +
  'heat-flow-sd, depth-<T>C (depth to the isotherm T °C, km) and temperature-<d>km (°C); with realizations each also .p10, .p50, .p90, ' +
  '.mean (the mean of the realizations; for a depth NoData where some realization does not reach the isotherm above the maximum depth) and ' +
  '.mean-diff (that mean − the deterministic map), and per isotherm depth-<T>C.reached (fraction 0–1: the share of the valid realizations ' +
  'reaching it above the maximum depth; the mean is defined only where it is 1); facies-<d>km, base-heat-flow, solidus-depth, melt-onset, ' +
  'inconsistent, cv-residuals, no-data-across-faults, isograds and the other structure layers';

const depthsPerColumn = (description: string) => ({ type: 'array', items: { type: ['number', 'null'] }, description });
/** POST /api/section (shared/products/section.ts computeSection): the section's grid and, per column, its limits. */
export const sectionAnswerSchema = {
  type: 'object',
  required: [
    'runId',
    'lengthKm',
    'width',
    'height',
    'distanceKm',
    'depthKm',
    'positions',
    'heatFlowMWm2',
    'temperatureC',
    'isotherms',
    'meltOnsetKm',
    'lithosphereBaseKm',
  ],
  properties: {
    runId: { type: 'string' },
    lengthKm: { type: 'number', description: 'geodesic length of the line on WGS84, km' },
    width: { type: 'integer', description: 'columns (samples along the line)' },
    height: { type: 'integer', description: 'rows (samples with depth, from 0 to maxDepthKm)' },
    distanceKm: { type: 'array', items: { type: 'number' }, description: 'distance of each column along the line, km' },
    depthKm: { type: 'array', items: { type: 'number' }, description: 'depth of each row, km' },
    positions: { type: 'array', items: { type: 'array', items: { type: 'number' } }, description: 'each column as [longitude, latitude], degrees WGS84' },
    heatFlowMWm2: { type: 'array', items: { type: ['number', 'null'] }, description: "surface heat flow of each column from the run's grid, mW/m²" },
    temperatureC: {
      type: 'array',
      items: { type: ['number', 'null'] },
      description: 'temperature, °C, row-major from the surface row (index = row·width + column); null below the melt onset or without heat flow',
    },
    faciesNames: { type: 'array', items: { type: 'string' } },
    faciesClass: { type: 'array', items: { type: 'integer' }, description: 'index into faciesNames per cell, −1 none' },
    modelZone: { type: 'array', items: { type: ['string', 'null'] }, description: "with override regions: each column's region (null: the run's model)" },
    isotherms: {
      type: 'array',
      items: { type: 'object', properties: { temperatureC: { type: 'number' }, depthKm: depthsPerColumn('depth of the isotherm under each column, km') } },
    },
    meltOnsetKm: depthsPerColumn(
      'melt onset of each column, km: where its temperature first reaches the dry (fluid-absent) solidus of its rock; null when not reached above maxDepthKm. The same value as the column answer at that point.',
    ),
    lithosphereBaseKm: depthsPerColumn(
      "base of the thermal lithosphere under each column, km: where the conductive geotherm meets the mantle adiabat (the adiabat gives the temperature below it); null when they do not meet above maxDepthKm. The same value as the column answer's lithosphereBaseKm at that point with the same maxDepthKm.",
    ),
    faultCrossings: { type: 'array', items: { type: 'object', description: 'id, distanceKm, lon, lat and the fault properties' } },
    isogradCrossings: { type: 'array', items: { type: 'object', description: 'id, distanceKm, lon, lat and the isograd properties' } },
    method: { type: 'string' },
    warnings: { type: 'array', items: { type: 'string' } },
    caution: { type: 'string' },
  },
};

/** The query of an upload into a project (POST /api/projects/:id/datasets, server/routes/project-datasets.ts), besides the upload's own. */
export const PROJECT_UPLOAD_QUERY = {
  kind: 'sites | samples | faults | wells | regions | model | grid',
  name: "the data set's name in the project (default: the model's own name, the GeoPackage or Shapefile layer, or the kind)",
  replace: 'id of a data set of the project (same kind) this upload replaces: it takes its name and the old one is detached',
};
