import { writeFile, rename, mkdir, unlink } from 'node:fs/promises';
import { join } from 'node:path';
import { InputError } from '../../shared/errors.ts';
import { VERSION, TOOL_NAME } from '../../shared/version.ts';
import { CAUTION } from '../../shared/caution.ts';
import { targetsFromGeoJson } from '../../shared/schema/targets.ts';
import { simulateAtPoints, simulateGrid, type SimulationOptions, type SimulationResult } from '../../shared/interp/simulateField.ts';
import { summarizeTargets } from '../../shared/interp/targetSummaries.ts';
import { writeGeoTiff } from '../io/geotiff.ts';
import { realizationsFiles } from './realizations-file.ts';
import { parseVerbArgs, numberOption, textOptions } from './args.ts';
import { optionalNumber, parseJson, readText } from './point-input.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import { SIMULATION_HELP, SIMULATION_OPTIONS, gridOptionsFromArgs, readSimulationPoints, simulationOptionsFromArgs } from './simulation-input.ts';
import { trendOption } from './drift-input.ts';

const OPTIONS = {
  ...SIMULATION_OPTIONS,
  ...textOptions('realizations seed at out-dir max-values'),
  'keep-realizations': { type: 'boolean', default: false },
} as const;

const HELP = `subtherm simulate: conditional simulation of a point field (realizations that honour the data and the variogram)

${SIMULATION_HELP.replace('  --cell-km KM | --size NXxNY   grid cell size (km) or grid size\n', '  --cell-km KM | --size NXxNY   grid cell size (km) or grid size; with --out-dir\n')}  --realizations N           number of realizations (1..10000), required
  --seed S                   integer seed, required: the same seed gives the same realizations
  --at T.geojson             simulate at these points: JSON with targets and realizations
  --out-dir DIR              writes <field>.mean.tif, .sd.tif, .p10.tif, .p50.tif, .p90.tif
  --keep-realizations        also write every realization: <field>.realizations.f32 (float32 little-endian,
                             realization-major, rows north to south), its .json header and a .vrt (one band per
                             realization, opens in GDAL); the isotherms verb reads the stack by its .json
  --max-values N             budget of realizations × targets held in memory (default 150000000 = 600 MiB)
  --json                     print one JSON object
`;

type Args = ReturnType<typeof parseVerbArgs<typeof OPTIONS>>['values'];

const round = (v: number, d = 6) => (Number.isFinite(v) ? Number(v.toPrecision(d)) : null);

/** The combinations of options the verb refuses before reading any file. */
function checkArgs(a: Args): void {
  const bad = (message: string, field: string, problem: string) => new InputError(message, [{ field, problem }], 'bad_option');
  if (a.points === undefined) throw bad('--points is required', 'points', 'missing');
  if (a.realizations === undefined) throw bad('--realizations is required', 'realizations', 'missing');
  if (a.seed === undefined) throw bad('--seed is required (the same seed gives the same realizations)', 'seed', 'missing');
  if ((a.at === undefined) === (a['out-dir'] === undefined))
    throw bad('give either --at T.geojson or --out-dir DIR (a grid)', a.at === undefined ? 'out-dir' : 'at', 'expected exactly one of --at and --out-dir');
  if (a.at !== undefined && (a['cell-km'] !== undefined || a.size !== undefined || a.bbox !== undefined))
    throw bad('--cell-km, --size and --bbox describe a grid; they do not go with --at', 'at', 'drop the grid options or --at');
  if (a['keep-realizations'] && a.at !== undefined)
    throw bad('--keep-realizations writes grid files: with --at the realizations are already in the JSON', 'keep-realizations', 'use it with --out-dir');
}

/** What both outputs report: the variogram, transform (with its declustering), drift, sampler and cross-validation. */
function commonReport(field: string, units: string, seed: number, r: SimulationResult) {
  return {
    field,
    units,
    realizationsCount: r.realizations,
    seed,
    variogram: r.variogram,
    transform: r.transform,
    trend: r.variogram.trend?.kind ?? 'none',
    sampler: r.sampler,
    conditioning: r.conditioning,
    crossValidation: r.crossValidation === null ? null : { ...r.crossValidation, residuals: undefined, units: 'normal score' },
  };
}

interface VerbContext {
  field: string;
  units: string;
  points: PointData;
  opts: SimulationOptions;
  warnings: string[];
  json: boolean;
  t0: number;
  readMs: number;
}

export async function simulate(argv: string[]): Promise<number> {
  const t0 = performance.now();
  const { values: a } = parseVerbArgs('simulate', argv, OPTIONS);
  if (a.help) {
    process.stdout.write(HELP);
    return 0;
  }
  checkArgs(a);
  const read = await readSimulationPoints(a);
  const units = read.field === 'heatFlowMWm2' ? 'mW/m²' : '';
  const trend = await trendOption(a.trend);
  const opts: SimulationOptions = {
    ...simulationOptionsFromArgs(a, numberOption('realizations', a.realizations), numberOption('seed', a.seed), units, trend),
    maxValues: optionalNumber('max-values', a['max-values']),
  };
  const c: VerbContext = { field: read.field, units, points: read.points, opts, warnings: [...read.warnings], json: a.json === true, t0, readMs: 0 };
  if (a.at !== undefined) {
    c.readMs = performance.now() - t0;
    return atPoints(c, a.at);
  }
  opts.grid = await gridOptionsFromArgs(a);
  c.readMs = performance.now() - t0;
  return onGrid(c, a['out-dir']!, a['keep-realizations'] === true, { points: read.sha256, ...(trend.sha256 === null ? {} : { drift: trend.sha256 }) });
}

/** --at: the realizations at the targets, one JSON object (or a table of their summaries). */
async function atPoints(c: VerbContext, atPath: string): Promise<number> {
  const targets = targetsFromGeoJson(parseJson(await readText(atPath, 'at'), atPath), atPath);
  const r = simulateAtPoints(c.points, c.opts, targets);
  const T = r.targets,
    R = r.realizations;
  const realizations: (number | null)[][] = [];
  for (let k = 0; k < R; k++) realizations.push(Array.from(r.values.subarray(k * T, (k + 1) * T), (v) => (Number.isFinite(v) ? v : null)));
  const s = summarizeTargets(r.values, R, T);
  const body = {
    targets: targets.ids.map((id, t) => ({ id, mean: round(s.mean[t]), sd: round(s.sd[t]), p10: round(s.p10[t]), p50: round(s.p50[t]), p90: round(s.p90[t]) })),
    realizations,
    ...commonReport(c.field, c.units, c.opts.seed, r),
    caution: CAUTION,
    warnings: [...c.warnings, ...r.warnings],
    timingsMs: { read: c.readMs, ...r.timingsMs, total: performance.now() - c.t0 },
  };
  if (c.json) process.stdout.write(JSON.stringify(body) + '\n');
  else {
    process.stdout.write(`id\tmean\tsd\tp10\tp50\tp90 (${c.units || 'value'}; ${R} realizations)\n`);
    for (const t of body.targets) process.stdout.write(`${t.id}\t${t.mean}\t${t.sd}\t${t.p10}\t${t.p50}\t${t.p90}\n`);
    for (const w of body.warnings) process.stdout.write(`warning: ${w}\n`);
    process.stdout.write(CAUTION + '\n');
  }
  return 0;
}

/** Min, max and mean of the cells with data (null without any). */
function gridStats(v: Float32Array) {
  let mn = Infinity,
    mx = -Infinity,
    sum = 0,
    n = 0;
  for (const x of v)
    if (x === x) {
      mn = Math.min(mn, x);
      mx = Math.max(mx, x);
      sum += x;
      n++;
    }
  return { min: n > 0 ? round(mn) : null, max: n > 0 ? round(mx) : null, mean: n > 0 ? round(sum / n) : null };
}

/** Writes every file under a temporary name, then renames them all: no half set of outputs on failure. */
async function writeAll(files: { name: string; bytes: Uint8Array }[]): Promise<string[]> {
  const written: [string, string][] = [];
  try {
    for (const f of files) {
      const tmp = `${f.name}.partial-${process.pid}`;
      await writeFile(tmp, f.bytes);
      written.push([tmp, f.name]);
    }
    for (const [tmp, name] of written) await rename(tmp, name);
  } catch (e) {
    for (const [tmp] of written) await unlink(tmp).catch(() => undefined);
    throw e;
  }
  return written.map(([, n]) => n);
}

/** A grid: the per-cell summaries as GeoTIFFs (and every realization with --keep-realizations) in `dir`. */
async function onGrid(c: VerbContext, dir: string, keep: boolean, inputSha256: Record<string, string>): Promise<number> {
  const { field, units } = c;
  const r = simulateGrid(c.points, c.opts);
  const tsum = performance.now();
  const s = summarizeTargets(r.values, r.realizations, r.targets);
  const summaryMs = performance.now() - tsum;
  await mkdir(dir, { recursive: true }).catch((e: NodeJS.ErrnoException) => {
    throw new InputError(`cannot create --out-dir ${dir}`, [{ field: 'out-dir', problem: e.code ?? String(e) }], 'bad_option');
  });
  const v = r.variogram;
  const provenance = {
    tool: TOOL_NAME,
    version: VERSION,
    verb: 'simulate',
    field,
    units,
    realizations: r.realizations,
    seed: c.opts.seed,
    variogram: {
      model: v.model,
      nugget: v.nugget,
      partialSill: v.partialSill,
      rangeKm: v.rangeKm,
      anisotropy: v.anisotropy,
      space: r.transform.kind === 'normal-score' ? 'normal score' : units,
    },
    transform: r.transform.kind,
    trend: v.trend?.kind ?? 'none',
    sampler: r.sampler.kind,
    inputSha256,
    created: new Date().toISOString(),
  };
  const products: [string, Float32Array, string][] = [
    ['mean', s.mean, 'mean of the realizations'],
    ['sd', s.sd, 'standard deviation of the realizations'],
    ['p10', s.p10, 'P10 of the realizations'],
    ['p50', s.p50, 'P50 (median) of the realizations'],
    ['p90', s.p90, 'P90 of the realizations'],
  ];
  const tw = performance.now();
  const out = products.map(([suffix, values, what]) => ({
    name: join(dir, `${field}.${suffix}.tif`),
    bytes: writeGeoTiff(
      { ...r.grid, values, units },
      { description: `${field} (${units || 'value'}), ${what}, ${r.realizations} conditional realizations`, metadata: provenance },
    ),
  }));
  if (keep)
    for (const f of realizationsFiles(field, units, r.grid, r.values, r.realizations, c.opts.seed, provenance))
      out.push({ name: join(dir, f.name), bytes: f.bytes });
  const files = await writeAll(out);
  const g = r.grid;
  const body = {
    grid: { nx: g.width, ny: g.height, bbox: [g.west, g.north - g.height * g.dy, g.west + g.width * g.dx, g.north], crs: g.crs, cellKm: r.cellKm, units },
    mean: gridStats(s.mean),
    sd: gridStats(s.sd),
    ...commonReport(field, units, c.opts.seed, r),
    files,
    caution: CAUTION,
    warnings: [...c.warnings, ...r.warnings],
    timingsMs: { read: c.readMs, ...r.timingsMs, summary: summaryMs, write: performance.now() - tw, total: performance.now() - c.t0 },
  };
  if (c.json) process.stdout.write(JSON.stringify(body) + '\n');
  else {
    process.stdout.write(
      `${r.realizations} realizations of ${field} on ${g.width} × ${g.height} cells (${r.cellKm.toFixed(3)} km); mean ${body.mean.mean}, sd ${body.sd.mean} ${units}\n`,
    );
    for (const f of files) process.stdout.write(`wrote ${f}\n`);
    for (const w of body.warnings) process.stdout.write(`warning: ${w}\n`);
    process.stdout.write(CAUTION + '\n');
  }
  return 0;
}
