import { writeFile, rename, mkdir, unlink } from 'node:fs/promises';
import { join } from 'node:path';
import { InputError } from '../../shared/errors.ts';
import { VERSION, TOOL_NAME } from '../../shared/version.ts';
import { CAUTION } from '../../shared/caution.ts';
import { parseVariogramOption, parseAnisotropyOption } from '../../shared/schema/interp.ts';
import { targetsFromGeoJson } from '../../shared/schema/targets.ts';
import { loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import type { PointData } from '../../shared/interp/interpolate.ts';
import { simulateAtPoints, simulateGrid, summarizeTargets, type SimulationOptions, type SimulationResult } from '../../shared/interp/simulateField.ts';
import { writeGeoTiff } from '../io/geotiff.ts';
import { realizationsFiles } from './realizations-file.ts';
import { parseVerbArgs, numberOption } from './args.ts';
import { bboxOption, neighborsOption, optionalNumber, parseJson, readPointsFile, readText, sizeOption } from './point-input.ts';

const OPTIONS = {
  points: { type: 'string' },
  field: { type: 'string', default: 'heatFlowMWm2' },
  'points-crs': { type: 'string' },
  variogram: { type: 'string' },
  'lag-km': { type: 'string' },
  'max-lag-km': { type: 'string' },
  anisotropy: { type: 'string' },
  trend: { type: 'string', default: 'none' },
  'error-field': { type: 'string' },
  transform: { type: 'string', default: 'normal-score' },
  neighbors: { type: 'string' },
  realizations: { type: 'string' },
  seed: { type: 'string' },
  at: { type: 'string' },
  'cell-km': { type: 'string' },
  size: { type: 'string' },
  bbox: { type: 'string' },
  crs: { type: 'string' },
  'out-dir': { type: 'string' },
  'max-values': { type: 'string' },
  'skip-missing': { type: 'boolean', default: false },
  'keep-realizations': { type: 'boolean', default: false },
} as const;

const HELP = `subtherm simulate: conditional simulation of a point field (realizations that honour the data and the variogram)

  --points P.geojson|P.csv   points (GeoJSON, or CSV with longitude,latitude or x,y + --points-crs)
  --field NAME               numeric property to simulate (default heatFlowMWm2)
  --variogram auto|spherical|exponential|gaussian|MODEL:NUGGET,PARTIAL_SILL,RANGE_KM
                             of the simulated (normal-score) values; fitted by default
  --lag-km KM --max-lag-km KM   empirical semivariogram lags
  --anisotropy ANGLE_DEG,RATIO  geometric anisotropy (major-axis azimuth, minor/major range ratio)
  --trend none               no drift (the only value available)
  --transform normal-score|none   simulate normal scores and back-transform (default), or the values as Gaussian
  --error-field FIELD        per-point measurement sd (e.g. uncertaintyMWm2): realizations are of the true field
  --neighbors K|all          data conditioning each target (default 16)
  --realizations N           number of realizations (1..10000), required
  --seed S                   integer seed, required: the same seed gives the same realizations
  --at T.geojson             simulate at these points: JSON with targets and realizations
  --cell-km KM | --size NXxNY   grid cell size (km) or grid size; with --out-dir
  --bbox=W,S,E,N             degrees (default: data envelope padded by 5%)
  --crs EPSG:nnnn            projected output grid (default EPSG:4326)
  --out-dir DIR              writes <field>.mean.tif, .sd.tif, .p10.tif, .p50.tif, .p90.tif
  --keep-realizations        also write every realization: <field>.realizations.f32 (float32 little-endian,
                             realization-major, rows north to south), its .json header and a .vrt (one band per
                             realization, opens in GDAL); the isotherms verb reads the stack by its .json
  --max-values N             budget of realizations × targets held in memory (default 150000000 = 600 MiB)
  --skip-missing             leave out features without the field (warning) instead of failing
  --json                     print one JSON object
`;

const round = (v: number, d = 6) => (Number.isFinite(v) ? Number(v.toPrecision(d)) : null);

export async function simulate(argv: string[]): Promise<number> {
  const t0 = performance.now();
  const { values: a } = parseVerbArgs('simulate', argv, OPTIONS);
  if (a.help) {
    process.stdout.write(HELP);
    return 0;
  }
  if (a.points === undefined) throw new InputError('--points is required', [{ field: 'points', problem: 'missing' }], 'bad_option');
  if (a.realizations === undefined) throw new InputError('--realizations is required', [{ field: 'realizations', problem: 'missing' }], 'bad_option');
  if (a.seed === undefined)
    throw new InputError('--seed is required (the same seed gives the same realizations)', [{ field: 'seed', problem: 'missing' }], 'bad_option');
  if (a.trend !== 'none') throw new InputError(`--trend ${a.trend} is not available; only none`, [{ field: 'trend', problem: 'expected none' }], 'bad_option');
  if (a.transform !== 'normal-score' && a.transform !== 'none')
    throw new InputError(
      `--transform must be normal-score or none, got ${a.transform}`,
      [{ field: 'transform', problem: 'expected normal-score or none' }],
      'bad_option',
    );
  if ((a.at === undefined) === (a['out-dir'] === undefined))
    throw new InputError(
      'give either --at T.geojson or --out-dir DIR (a grid)',
      [{ field: a.at === undefined ? 'out-dir' : 'at', problem: 'expected exactly one of --at and --out-dir' }],
      'bad_option',
    );
  if (a.at !== undefined && (a['cell-km'] !== undefined || a.size !== undefined || a.bbox !== undefined))
    throw new InputError(
      '--cell-km, --size and --bbox describe a grid; they do not go with --at',
      [{ field: 'at', problem: 'drop the grid options or --at' }],
      'bad_option',
    );
  if (a['keep-realizations'] && a.at !== undefined)
    throw new InputError(
      '--keep-realizations writes grid files: with --at the realizations are already in the JSON',
      [{ field: 'keep-realizations', problem: 'use it with --out-dir' }],
      'bad_option',
    );
  if (a['cell-km'] !== undefined && a.size !== undefined)
    throw new InputError('give --cell-km or --size, not both', [{ field: 'size', problem: 'conflicts with --cell-km' }], 'bad_option');
  const field = a.field;
  const warnings: string[] = [];

  const read = await readPointsFile(a.points, field, { pointsCrs: a['points-crs'], skipMissing: a['skip-missing'], errorField: a['error-field'] });
  const points: PointData = read.points;
  warnings.push(...read.warnings);
  const inputSha256: Record<string, string> = { points: read.sha256 };
  const neighbors = neighborsOption(a.neighbors);
  const units = field === 'heatFlowMWm2' ? 'mW/m²' : '';
  const opts: SimulationOptions = {
    realizations: numberOption('realizations', a.realizations),
    seed: numberOption('seed', a.seed),
    variogram: parseVariogramOption(a.variogram),
    anisotropy: parseAnisotropyOption(a.anisotropy),
    transform: a.transform,
    measurementError: a['error-field'] !== undefined,
    neighbors,
    lagKm: optionalNumber('lag-km', a['lag-km']),
    maxLagKm: optionalNumber('max-lag-km', a['max-lag-km']),
    maxValues: optionalNumber('max-values', a['max-values']),
    units,
  };
  const readMs = performance.now() - t0;
  const common = (r: SimulationResult) => ({
    field,
    units,
    realizationsCount: r.realizations,
    seed: opts.seed,
    variogram: r.variogram,
    transform: r.transform,
    trend: 'none',
    sampler: r.sampler,
    conditioning: r.conditioning,
    crossValidation: r.crossValidation === null ? null : { ...r.crossValidation, residuals: undefined, units: 'normal score' },
  });

  if (a.at !== undefined) {
    const targets = targetsFromGeoJson(parseJson(await readText(a.at, 'at'), a.at), a.at);
    const r = simulateAtPoints(points, opts, targets);
    const T = r.targets,
      R = r.realizations;
    const realizations: (number | null)[][] = [];
    for (let k = 0; k < R; k++) {
      const row: (number | null)[] = new Array<number | null>(T);
      for (let t = 0; t < T; t++) {
        const v = r.values[k * T + t];
        row[t] = Number.isFinite(v) ? v : null;
      }
      realizations.push(row);
    }
    const s = summarizeTargets(r.values, R, T);
    const body = {
      targets: targets.ids.map((id, t) => ({
        id,
        mean: round(s.mean[t]),
        sd: round(s.sd[t]),
        p10: round(s.p10[t]),
        p50: round(s.p50[t]),
        p90: round(s.p90[t]),
      })),
      realizations,
      ...common(r),
      caution: CAUTION,
      warnings: [...warnings, ...r.warnings],
      timingsMs: { read: readMs, ...r.timingsMs, total: performance.now() - t0 },
    };
    if (a.json) process.stdout.write(JSON.stringify(body) + '\n');
    else {
      process.stdout.write(`id\tmean\tsd\tp10\tp50\tp90 (${units || 'value'}; ${R} realizations)\n`);
      for (const t of body.targets) process.stdout.write(`${t.id}\t${t.mean}\t${t.sd}\t${t.p10}\t${t.p50}\t${t.p90}\n`);
      for (const w of body.warnings) process.stdout.write(`warning: ${w}\n`);
      process.stdout.write(CAUTION + '\n');
    }
    return 0;
  }

  // Grid.
  const size = sizeOption(a.size);
  const bbox = bboxOption(a.bbox);
  const crs = a.crs ?? 'EPSG:4326';
  const crsDef = await loadCrsDefinition(crs);
  opts.grid = {
    bbox,
    cellKm: a['cell-km'] === undefined ? undefined : numberOption('cell-km', a['cell-km']),
    size,
    crs: crsDef === WGS84_DEF ? 'EPSG:4326' : crs,
    crsDef,
  };
  const r = simulateGrid(points, opts);
  const tsum = performance.now();
  const s = summarizeTargets(r.values, r.realizations, r.targets);
  const summaryMs = performance.now() - tsum;
  const dir = a['out-dir']!;
  await mkdir(dir, { recursive: true }).catch((e: NodeJS.ErrnoException) => {
    throw new InputError(`cannot create --out-dir ${dir}`, [{ field: 'out-dir', problem: e.code ?? String(e) }], 'bad_option');
  });
  const provenance = {
    tool: TOOL_NAME,
    version: VERSION,
    verb: 'simulate',
    field,
    units,
    realizations: r.realizations,
    seed: opts.seed,
    variogram: {
      model: r.variogram.model,
      nugget: r.variogram.nugget,
      partialSill: r.variogram.partialSill,
      rangeKm: r.variogram.rangeKm,
      anisotropy: r.variogram.anisotropy,
      space: r.transform.kind === 'normal-score' ? 'normal score' : units,
    },
    transform: r.transform.kind,
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
  // Write every file under a temporary name, then rename them all: no half set of outputs on failure.
  const tw = performance.now();
  const written: [string, string][] = [];
  try {
    for (const [suffix, values, what] of products) {
      const name = join(dir, `${field}.${suffix}.tif`);
      const tmp = `${name}.partial-${process.pid}`;
      await writeFile(
        tmp,
        Buffer.from(
          writeGeoTiff(
            { ...r.grid, values, units },
            { description: `${field} (${units || 'value'}), ${what}, ${r.realizations} conditional realizations`, metadata: provenance },
          ),
        ),
      );
      written.push([tmp, name]);
    }
    if (a['keep-realizations'])
      for (const f of realizationsFiles(field, units, r.grid, r.values, r.realizations, opts.seed, provenance)) {
        const name = join(dir, f.name);
        const tmp = `${name}.partial-${process.pid}`;
        await writeFile(tmp, f.bytes);
        written.push([tmp, name]);
      }
    for (const [tmp, name] of written) await rename(tmp, name);
  } catch (e) {
    for (const [tmp] of written) await unlink(tmp).catch(() => undefined);
    throw e;
  }
  const files = written.map(([, n]) => n);
  const stats = (v: Float32Array) => {
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
  };
  const g = r.grid;
  const body = {
    grid: { nx: g.width, ny: g.height, bbox: [g.west, g.north - g.height * g.dy, g.west + g.width * g.dx, g.north], crs: g.crs, cellKm: r.cellKm, units },
    mean: stats(s.mean),
    sd: stats(s.sd),
    ...common(r),
    files,
    caution: CAUTION,
    warnings: [...warnings, ...r.warnings],
    timingsMs: { read: readMs, ...r.timingsMs, summary: summaryMs, write: performance.now() - tw, total: performance.now() - t0 },
  };
  if (a.json) process.stdout.write(JSON.stringify(body) + '\n');
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
