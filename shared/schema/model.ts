/**
 * The thermal-model JSON contract (DESIGN.md §3): surface temperature, surface heat flow, and a stack of layers.
 * Any numeric parameter except the layer bottoms may be a distribution for Monte Carlo runs.
 * `parseThermalModel` validates at the boundary and throws an InputError naming the layer and the field.
 */
import { z } from 'zod';
import { InputError, type InputProblem } from '../errors.ts';

/** Rock kinds a layer may name (each has its own solidus curves). */
export const ROCK_KINDS = ['sediment', 'felsic-crust', 'mafic-crust', 'mantle'] as const;
export type RockKind = (typeof ROCK_KINDS)[number];

const finite = z.number({ error: 'expected a finite number' });

/**
 * Bounds of a thermal model: sizes that keep one column's work small, and the plausible range of each physical
 * parameter (a value outside is a mistake of units or a typo, e.g. conductivity 1e-308 or a bottom at 1e308 km).
 * A fixed value and the whole support of a bounded distribution must lie inside; a normal distribution's mean
 * must (its tails are cut per realization by the physical checks of the Monte Carlo).
 */
export const MODEL_BOUNDS = {
  /** Layers in one model (a column's work grows with the square of the layer count). */
  maxLayers: 100,
  /** Characters in a model or layer name. */
  maxNameChars: 200,
  ranges: {
    conductivityWmK: {
      min: 0.1,
      max: 10,
      units: 'W/m/K',
      source:
        'Clauser & Huenges (1995), Thermal conductivity of rocks and minerals (AGU Reference Shelf 3): rocks and rock-forming minerals lie within about 0.1–10 W/m/K (from memory)',
    },
    heatProductionUWm3: {
      min: 0,
      max: 100,
      units: 'µW/m³',
      source: 'Rybach (1976); common practice: crustal rocks 0–10 µW/m³, the most radioactive granites some tens',
    },
    densityKgM3: {
      min: 1000,
      max: 4000,
      units: 'kg/m³',
      source: 'common practice: water-saturated sediment (about 1500) to eclogite and mantle rock (about 3300–3600)',
    },
    bottomKm: { min: 0, max: 700, units: 'km', source: 'common practice: the model ends above the base of the upper mantle (the 660 km discontinuity)' },
    heatProductionDecayKm: { min: 0, max: 1000, units: 'km', source: 'Lachenbruch (1970): D about 10 km; larger values are nearly constant heat production' },
    surfaceTemperatureC: { min: -60, max: 60, units: '°C', source: 'common practice: mean annual ground-surface temperatures on Earth' },
    surfaceHeatFlowMWm2: {
      min: 0,
      max: 2000,
      units: 'mW/m²',
      source: 'common practice: continental mean about 65 mW/m²; active hydrothermal areas reach several hundred',
    },
    uraniumPpm: { min: 0, max: 1000, units: 'ppm', source: 'common practice: crustal rocks 0.1–20 ppm, uranium-rich granites up to hundreds' },
    thoriumPpm: { min: 0, max: 2000, units: 'ppm', source: 'common practice: crustal rocks 0.5–80 ppm' },
    potassiumPct: { min: 0, max: 20, units: '%', source: 'common practice: crustal rocks 0–8 % K, K-feldspar about 14 %' },
    mantlePotentialTemperatureC: {
      min: 1100,
      max: 1700,
      units: '°C',
      source: 'McKenzie & Bickle (1988) about 1280 °C for ambient mantle; hot plume sources to about 1600 °C (from memory)',
    },
    conductivityReferenceTempC: {
      min: -60,
      max: 1000,
      units: '°C',
      source: 'common practice: laboratory conductivities are reported from room temperature to several hundred °C',
    },
  },
} as const;

type RangedField = keyof typeof MODEL_BOUNDS.ranges;

export const distributionSchema = z.discriminatedUnion('dist', [
  z.object({ dist: z.literal('normal'), mean: finite, sd: finite.min(0, 'sd must be ≥ 0') }).strict(),
  z
    .object({ dist: z.literal('truncnormal'), mean: finite, sd: finite.min(0, 'sd must be ≥ 0'), min: finite, max: finite })
    .strict()
    .refine((d) => d.min <= d.max, { message: 'truncnormal needs min ≤ max' }),
  z
    .object({ dist: z.literal('uniform'), min: finite, max: finite })
    .strict()
    .refine((d) => d.min <= d.max, { message: 'uniform needs min ≤ max' }),
  z
    .object({ dist: z.literal('triangular'), min: finite, mode: finite, max: finite })
    .strict()
    .refine((d) => d.min <= d.mode && d.mode <= d.max, { message: 'triangular needs min ≤ mode ≤ max' }),
]);

/** A number, or a distribution of it. */
export const uncertainNumberSchema = z.union([finite, distributionSchema], {
  error: 'expected a finite number or a distribution { dist: normal|truncnormal|uniform|triangular, … }',
});

export type UncertainNumber = z.infer<typeof uncertainNumberSchema>;

export const thermalLayerSchema = z
  .object({
    name: z.string().max(MODEL_BOUNDS.maxNameChars, `a layer name has at most ${MODEL_BOUNDS.maxNameChars} characters`).optional(),
    /** Bottom of the layer, km below the surface; strictly increasing down the stack. */
    bottomKm: finite.gt(0, 'bottomKm must be > 0'),
    /** k0 in k(T) = k0/(1 + bT), W/m/K. */
    conductivityWmK: uncertainNumberSchema,
    /** b in k(T) = k0/(1 + bT), 1/K (absent = 0). */
    conductivityTempCoeffPerK: uncertainNumberSchema.optional(),
    /** Heat production at the layer top, µW/m³. */
    heatProductionUWm3: uncertainNumberSchema.optional(),
    /** Radioelement contents (Rybach 1976), instead of heatProductionUWm3. */
    uraniumPpm: uncertainNumberSchema.optional(),
    thoriumPpm: uncertainNumberSchema.optional(),
    potassiumPct: uncertainNumberSchema.optional(),
    /** e-folding depth D of A(z) = A_top·exp(−(z − z_top)/D), km (absent = constant in the layer). */
    heatProductionDecayKm: uncertainNumberSchema.optional(),
    /** Density, kg/m³ (absent = 2700 with a warning). */
    densityKgM3: uncertainNumberSchema.optional(),
    /**
     * Rock kind, which chooses the layer's solidus curves (shared/petrology/solidus.ts) and, for `mantle`, the
     * mantle adiabat below the conductive lid. Absent = `felsic-crust`.
     */
    rock: z.enum(ROCK_KINDS, { error: `expected one of ${ROCK_KINDS.join(', ')}` }).optional(),
    /** Marks the layer whose heat production defines the reduced heat flow (q0 = qr + D·A0); at most one layer. */
    heatProducingUpperCrust: z.boolean().optional(),
    /**
     * Temperature at which conductivityWmK was measured, °C (absent = 0 °C, i.e. conductivityWmK is k0). With b the
     * stored k0 is k_ref·(1 + b·T_ref), so k(T_ref) equals the value given.
     */
    conductivityReferenceTempC: finite.optional(),
  })
  .strict();

export const thermalModelSchema = z
  .object({
    /** A label for the model (shown in reports and provenance). */
    name: z.string().max(MODEL_BOUNDS.maxNameChars, `a model name has at most ${MODEL_BOUNDS.maxNameChars} characters`).optional(),
    description: z.string().max(2000).optional(),
    surfaceTemperatureC: uncertainNumberSchema,
    surfaceHeatFlowMWm2: uncertainNumberSchema.optional(),
    /**
     * Mantle potential temperature, °C (absent = 1330 °C, DEFAULT_MANTLE_POTENTIAL_TEMPERATURE_C): the adiabat that
     * bounds temperatures in `mantle` layers below the conductive lid.
     */
    mantlePotentialTemperatureC: uncertainNumberSchema.optional(),
    layers: z
      .array(thermalLayerSchema)
      .min(1, 'at least one layer is needed')
      .max(MODEL_BOUNDS.maxLayers, `at most ${MODEL_BOUNDS.maxLayers} layers per model (limit maxLayers)`),
  })
  .strict();

export type ThermalLayerInput = z.infer<typeof thermalLayerSchema>;
export type ThermalModelInput = z.infer<typeof thermalModelSchema>;

type Num = UncertainNumber | undefined;

/**
 * The values a parameter's range checks must accept: a number itself, a normal its mean (draws outside a physical
 * range are rejected per realization and counted, so only the mean must lie inside), a bounded distribution its
 * bounds.
 */
export function checkedRange(v: UncertainNumber): [number, number] {
  if (typeof v === 'number') return [v, v];
  switch (v.dist) {
    case 'normal':
      return [v.mean, v.mean];
    case 'truncnormal':
    case 'uniform':
    case 'triangular':
      return [v.min, v.max];
  }
}

/** Smallest and largest value a parameter can take (normal: ±∞ unless sd = 0). */
function support(v: Num): [number, number] | null {
  if (v === undefined) return null;
  return typeof v !== 'number' && v.dist === 'normal' && v.sd !== 0 ? [-Infinity, Infinity] : checkedRange(v);
}

/** Checks the physical ranges zod's shapes cannot express; returns problems (empty = fine). */
export function checkThermalModel(m: ThermalModelInput): InputProblem[] {
  const out: InputProblem[] = [];
  const where = (i: number) => (m.layers[i].name !== undefined ? `layers[${i}] (${m.layers[i].name})` : `layers[${i}]`);
  // Bounded parameters must be possible everywhere in their support; a normal may stray (draws outside the
  // physical range are rejected per realization and counted), but its mean must be valid.
  const positive = (i: number | null, field: string, v: Num, allowZero: boolean) => {
    if (v === undefined) return;
    const [lo] = checkedRange(v);
    const ok = allowZero ? lo >= 0 : lo > 0;
    if (!ok) out.push({ feature: i === null ? 'model' : where(i), field, problem: `must be ${allowZero ? '≥ 0' : '> 0'}, got ${lo}` });
  };
  // Plausible physical ranges (MODEL_BOUNDS.ranges, each with its source).
  const inRange = (i: number | null, field: RangedField, v: Num) => {
    if (v === undefined) return;
    const r = MODEL_BOUNDS.ranges[field];
    const [lo, hi] = checkedRange(v);
    if (lo < r.min || hi > r.max) {
      const got = lo === hi ? String(lo) : `${lo}…${hi}`;
      out.push({
        feature: i === null ? 'model' : where(i),
        field,
        problem: `outside the plausible range ${r.min}–${r.max} ${r.units} (${r.source}), got ${got}`,
      });
    }
  };
  inRange(null, 'surfaceTemperatureC', m.surfaceTemperatureC);
  inRange(null, 'surfaceHeatFlowMWm2', m.surfaceHeatFlowMWm2);
  m.layers.forEach((l, i) => {
    inRange(i, 'bottomKm', l.bottomKm);
    inRange(i, 'conductivityWmK', l.conductivityWmK);
    inRange(i, 'heatProductionUWm3', l.heatProductionUWm3);
    inRange(i, 'densityKgM3', l.densityKgM3);
    inRange(i, 'heatProductionDecayKm', l.heatProductionDecayKm);
    inRange(i, 'uraniumPpm', l.uraniumPpm);
    inRange(i, 'thoriumPpm', l.thoriumPpm);
    inRange(i, 'potassiumPct', l.potassiumPct);
    inRange(i, 'conductivityReferenceTempC', l.conductivityReferenceTempC);
  });
  if (m.surfaceHeatFlowMWm2 !== undefined) positive(null, 'surfaceHeatFlowMWm2', m.surfaceHeatFlowMWm2, false);
  inRange(null, 'mantlePotentialTemperatureC', m.mantlePotentialTemperatureC);
  const marked = m.layers.map((l, i) => (l.heatProducingUpperCrust === true ? i : -1)).filter((i) => i >= 0);
  if (marked.length > 1)
    out.push({ feature: where(marked[1]), field: 'heatProducingUpperCrust', problem: `only one layer may be marked; ${where(marked[0])} already is` });
  let prev = 0;
  m.layers.forEach((l, i) => {
    if (!(l.bottomKm > prev))
      out.push({ feature: where(i), field: 'bottomKm', problem: `must be greater than the layer above's bottom (${prev} km), got ${l.bottomKm}` });
    prev = Math.max(prev, l.bottomKm);
    positive(i, 'conductivityWmK', l.conductivityWmK, false);
    positive(i, 'heatProductionUWm3', l.heatProductionUWm3, true);
    positive(i, 'uraniumPpm', l.uraniumPpm, true);
    positive(i, 'thoriumPpm', l.thoriumPpm, true);
    positive(i, 'potassiumPct', l.potassiumPct, true);
    positive(i, 'heatProductionDecayKm', l.heatProductionDecayKm, false);
    positive(i, 'densityKgM3', l.densityKgM3, false);
    out.push(...heatProductionProblems(l, where(i)), ...conductivityCoefficientProblems(l, m.surfaceTemperatureC, where(i)));
  });
  return out;
}

type LayerInput = ThermalModelInput['layers'][number];

/** A layer's heat production: given as heatProductionUWm3 or as all three radioelement contents, never both. */
function heatProductionProblems(l: LayerInput, feature: string): InputProblem[] {
  const out: InputProblem[] = [];
  const radio = l.uraniumPpm !== undefined || l.thoriumPpm !== undefined || l.potassiumPct !== undefined;
  const allRadio = l.uraniumPpm !== undefined && l.thoriumPpm !== undefined && l.potassiumPct !== undefined;
  if (l.heatProductionUWm3 === undefined && !radio)
    out.push({ feature, field: 'heatProductionUWm3', problem: 'missing: give heatProductionUWm3, or uraniumPpm + thoriumPpm + potassiumPct' });
  if (l.heatProductionUWm3 !== undefined && radio)
    out.push({ feature, field: 'heatProductionUWm3', problem: 'give either heatProductionUWm3 or radioelement contents, not both' });
  if (l.heatProductionUWm3 === undefined && radio && !allRadio) {
    const missing = (['uraniumPpm', 'thoriumPpm', 'potassiumPct'] as const).filter((f) => l[f] === undefined);
    out.push({ feature, field: missing.join(', '), problem: 'missing: radioelement heat production needs all of uraniumPpm, thoriumPpm, potassiumPct' });
  }
  return out;
}

/** 1 + bT must stay > 0 at the surface temperature already (deeper layers are checked once T is known). */
function conductivityCoefficientProblems(l: LayerInput, surfaceTemperatureC: Num, feature: string): InputProblem[] {
  const out: InputProblem[] = [];
  const b = support(l.conductivityTempCoeffPerK);
  const t0 = support(surfaceTemperatureC);
  if (!b || !t0) return out;
  for (const bv of b)
    for (const tv of t0) {
      if (Number.isFinite(bv) && Number.isFinite(tv) && !(1 + bv * tv > 0)) {
        out.push({ feature, field: 'conductivityTempCoeffPerK', problem: `1 + b·T ≤ 0 at T = ${tv} °C with b = ${bv}: k(T) = k0/(1 + bT) undefined` });
      }
    }
  return out;
}

function featureOf(m: unknown, path: PropertyKey[]): { feature?: string; field: string } {
  if (path[0] === 'layers' && typeof path[1] === 'number') {
    const i = path[1];
    const layers = (m as { layers?: unknown } | null)?.layers;
    const name = Array.isArray(layers) ? (layers[i] as { name?: unknown } | undefined)?.name : undefined;
    return { feature: typeof name === 'string' ? `layers[${i}] (${name})` : `layers[${i}]`, field: path.slice(2).map(String).join('.') || 'layer' };
  }
  return { feature: 'model', field: path.map(String).join('.') || '(root)' };
}

/**
 * Validates a thermal model read from JSON. Throws InputError (code `invalid_model`) whose details name the layer
 * (`layers[1] (lower crust)`), the field and the problem.
 * @param source a file name or label to put in the message
 */
export function parseThermalModel(raw: unknown, source = 'model'): ThermalModelInput {
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) {
    const got = Array.isArray(raw) ? 'an array' : raw === null ? 'null' : typeof raw;
    throw new InputError(
      `${source}: a thermal model is a JSON object`,
      [{ feature: 'model', field: '(root)', problem: `expected an object with surfaceTemperatureC and layers, got ${got}` }],
      'invalid_model',
    );
  }
  const r = thermalModelSchema.safeParse(raw);
  if (!r.success) {
    // An unknown member is named by its own path (one problem each), so every way in reports the same field.
    const details: InputProblem[] = r.error.issues.flatMap((iss) => {
      const paths = iss.code === 'unrecognized_keys' ? iss.keys.map((k) => [...iss.path, k]) : [iss.path];
      const problem = iss.code === 'unrecognized_keys' ? 'unknown member: not part of the thermal model (check the spelling)' : iss.message;
      return paths.map((p) => ({ ...featureOf(raw, p), problem }));
    });
    throw new InputError(
      `${source}: invalid thermal model: ${details.map((d) => `${d.feature} ${d.field}: ${d.problem}`).join('; ')}`,
      details,
      'invalid_model',
    );
  }
  const problems = checkThermalModel(r.data);
  if (problems.length > 0) {
    throw new InputError(
      `${source}: invalid thermal model: ${problems.map((d) => `${d.feature} ${d.field}: ${d.problem}`).join('; ')}`,
      problems,
      'invalid_model',
    );
  }
  return r.data;
}
