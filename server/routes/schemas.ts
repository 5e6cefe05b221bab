/**
 * zod schemas of the HTTP API's own request bodies (the run request is shared/schema/run.ts, data sets
 * shared/schema/features.ts, models shared/schema/model.ts). Also the functions that turn a zod failure into the
 * API's InputError.
 */
import { z } from 'zod';
import { InputError, type InputProblem } from '../../shared/errors.ts';

export const idSchema = z
  .string()
  .min(1)
  .max(100)
  .regex(/^[A-Za-z0-9_-]+$/, 'an id has letters, digits, _ and - only');
const longitude = z.number().min(-180, 'longitude must be within [-180, 180] degrees').max(180, 'longitude must be within [-180, 180] degrees');
const latitude = z.number().min(-90, 'latitude must be within [-90, 90] degrees').max(90, 'latitude must be within [-90, 90] degrees');
const isotherms = z.array(z.number().gt(-50).lt(2000)).min(1).max(10);
const depths = z.array(z.number().min(0).max(300)).max(20);

/** Column depth axis: down to maxDepthKm (km) every stepKm (km); at most 3000 samples. */
const columnAxis = {
  maxDepthKm: z.number().gt(0).max(300).default(60),
  stepKm: z.number().gt(0).max(100).default(0.5),
  isothermsC: isotherms.optional(),
  depthsKm: depths.optional(),
  /** Pore pressure: `hydrostatic` (default) or `lambda:λ` (λ × lithostatic). */
  porePressure: z
    .string()
    .regex(/^(hydrostatic|lambda:\d+(\.\d+)?)$/, 'expected hydrostatic or lambda:λ, e.g. lambda:0.7')
    .optional()
    .describe(
      'pore pressure in the profile: "hydrostatic" (default; ρ_fluid·g·z) or "lambda:λ" (λ × lithostatic, Hubbert & Rubey 1959); the answer gives porePressureMPa, poreFluidFactor (λ = pore / lithostatic) and effectivePressureMPa (lithostatic − pore) at each depth',
    ),
  /** Pore-fluid density for hydrostatic pressure, kg/m³ (default 1000). */
  fluidDensityKgM3: z.number().gt(0).lt(5000).optional().describe('pore-fluid density for hydrostatic pore pressure, kg/m³ (default 1000)'),
};

/** POST /api/column at a point of a run's heat-flow grid. */
export const columnAtRunSchema = z.strictObject({
  runId: idSchema,
  lon: longitude,
  lat: latitude,
  ...columnAxis,
});

/** POST /api/column for a model and a surface heat flow (no run). */
export const columnOfModelSchema = z.strictObject({
  model: z.union([idSchema, z.record(z.string(), z.unknown())]),
  heatFlowMWm2: z.number().gt(0, 'heat flow must be > 0 mW/m²').lt(2000).optional(),
  heatFlowSdMWm2: z.number().min(0).lt(2000).optional(),
  realizations: z.number().int().min(0).max(2000).default(0),
  seed: z
    .number()
    .int()
    .min(0)
    .max(2 ** 32 - 1)
    .default(1),
  ...columnAxis,
});

const lonLatPair = z.tuple([longitude, latitude]);

/** POST /api/section: a polyline through a run's grid. */
export const sectionSchema = z
  .strictObject({
    runId: idSchema,
    line: z.array(lonLatPair).min(2, 'a section line needs at least two vertices').max(1000),
    maxDepthKm: z.number().gt(0).max(300).default(30),
    samples: z.number().int().min(2).max(1000).default(200),
    depthSamples: z.number().int().min(2).max(500).default(100),
  })
  .refine((q) => q.samples * q.depthSamples <= 250_000, { message: 'samples × depthSamples must be at most 250,000 cells', path: ['samples'] });

/** A saved map state: any JSON object the client keeps (view, layers, parameters). */
const stateSchema = z.record(z.string(), z.unknown());

export const projectCreateSchema = z.strictObject({
  title: z.string().trim().min(1, 'a project needs a title').max(200),
  /** A new project starts empty: no data sets, no runs, an empty state unless one is given. */
  state: stateSchema.default({}),
});

export const projectUpdateSchema = z.strictObject({
  title: z.string().trim().min(1).max(200).optional(),
  state: stateSchema,
});

export const revisionQuerySchema = z.object({
  revision: z
    .string()
    .regex(/^[1-9][0-9]{0,8}$/, 'revision is a positive integer')
    .transform(Number)
    .optional(),
});

export const datasetQuerySchema = z.object({
  kind: z.enum(['sites', 'samples', 'faults', 'wells', 'regions', 'model', 'grid'], {
    error: 'kind must be one of sites, samples, faults, wells, regions, model, grid',
  }),
  title: z.string().max(200).optional(),
});

/** A data set's name inside its project (what the page shows; ids stay opaque). */
export const datasetNameSchema = z.string().trim().min(1, 'a data set needs a name').max(200, 'a data set name has at most 200 characters');

/** POST /api/projects/:id/datasets query. */
export const projectDatasetQuerySchema = z.object({
  kind: z.enum(['sites', 'samples', 'faults', 'wells', 'regions', 'model', 'grid'], {
    error: 'kind must be one of sites, samples, faults, wells, regions, model, grid',
  }),
  name: datasetNameSchema.optional(),
  /** A data set of the project (same kind) that the upload replaces: it takes that one's name, and that one is detached. */
  replace: z.string().min(1).max(200).optional(),
});

/** PATCH /api/projects/:id/datasets/:dsId body. */
export const datasetPatchSchema = z.strictObject({ name: datasetNameSchema });

/** zod issues as the API's problem list. */
export function zodProblems(error: z.ZodError): InputProblem[] {
  return error.issues.slice(0, 50).map((i) => ({ field: i.path.map(String).join('.') || '(body)', problem: i.message }));
}

/** Parses `value` with `schema`, or throws InputError (`code`) naming each field. */
export function parseWith<S extends z.ZodType>(schema: S, value: unknown, what: string, code = 'invalid_request'): z.output<S> {
  const r = schema.safeParse(value);
  if (r.success) return r.data;
  const problems = zodProblems(r.error);
  throw new InputError(`invalid ${what}: ${problems.map((p) => `${p.field}: ${p.problem}`).join('; ')}`, problems, code);
}

/**
 * Depth of nesting of a parsed JSON value, iteratively (no recursion, so no stack overflow), stopping early past
 * `limit`.
 */
export function jsonDepthExceeds(value: unknown, limit: number): boolean {
  const stack: [unknown, number][] = [[value, 1]];
  while (stack.length > 0) {
    const [v, d] = stack.pop()!;
    if (v === null || typeof v !== 'object') continue;
    if (d > limit) return true;
    for (const child of Array.isArray(v) ? v : Object.values(v as Record<string, unknown>)) {
      if (child !== null && typeof child === 'object') stack.push([child, d + 1]);
    }
  }
  return false;
}
