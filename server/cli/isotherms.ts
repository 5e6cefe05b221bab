import { readFile, writeFile, mkdir } from 'node:fs/promises';
import { join } from 'node:path';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { ringsOfGeometry } from '../../shared/grid/polygon-cells.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { loadCrsDefinition } from '../../shared/interp/projection.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { overrideFromProperties } from '../../shared/products/overrides.ts';
import { buildProvenance, withMethod } from '../../shared/products/provenance.ts';
import { CAUTION } from '../../shared/caution.ts';
import { readGeoTiff, writeGeoTiffFile } from '../io/geotiff.ts';
import { geojsonText, sha256Hex } from '../io/export.ts';
import { computeThermalProducts, type OverrideRegion } from '../../shared/products/thermal-products.ts';
import { numberListOption, numberOption, parseVerbArgs } from './args.ts';
import { SIMULATION_OPTIONS, heatFlowSimulationOptions, readSimulationPoints, type SimulationArgs } from './simulation-input.ts';
import { simulateRunHeatFlow } from '../runs/heat-flow-simulation.ts';
import { readRealizationsFile } from './realizations-file.ts';

const HELP = `subtherm isotherms: thermal grids from a heat-flow grid and a thermal model

  --heat-flow G.tif           surface heat flow (mW/m²), single band GeoTIFF in EPSG:4326 or a projected EPSG CRS
  --band N                    band of a multi-band GeoTIFF (1-based; required when it has several)
  --heat-flow-sd G.sd.tif     standard deviation of the heat flow (same grid), for the Monte Carlo
  --model M.json              thermal model (layers; parameters may be distributions)
  --isotherms 300,500         isotherms (°C, default 300,500) → depth-<T>C.tif and .contours.geojson
  --depths-km 3,5             depths (km) → temperature-<d>km.tif and .contours.geojson
  --facies-depth-km D         facies at this depth → facies-<D>km.tif (default: the deepest of --depths-km, else 10)
  --max-depth-km Z            isotherm and solidus searches stop here (default: the model's bottom)
  --overrides O.geojson       polygons whose "layers" amend (by layer name) or, with "mode": "replace", replace
                              the model's layers inside them
  --contour-interval-km K     depth-contour interval (default 1)
  --contour-interval-c C      temperature-contour interval (default: about 12 levels)
  --realizations N --seed S   Monte Carlo → depth-<T>C.p10/.p50/.p90.tif
  --heat-flow-error-correlation full|independent   (deprecated; default full) with --heat-flow-sd
  --points P.geojson|P.csv    instead of --heat-flow-sd: the realizations' heat flow is simulated conditionally from
                              these sites on the heat-flow grid (with --variogram, --anisotropy, --transform,
                              --error-field, --neighbors, --lag-km, --max-lag-km, --points-crs as in simulate)
  --realizations-from R.json  instead of --points: the heat-flow realizations written by simulate --keep-realizations
                              (its .json header; on the heat-flow grid); --realizations N uses the first N (default all)
  --out-dir DIR               where the files go
  --json                      print one JSON object
`;

async function readBytes(path: string, what: string): Promise<Buffer> {
  try {
    return await readFile(path);
  } catch (e) {
    throw new InputError(`cannot read ${what} file ${path}`, [{ field: what, problem: (e as NodeJS.ErrnoException).code ?? String(e) }], 'file_not_found');
  }
}

/**
 * Reads a user's grid GeoTIFF (EPSG:4326 or a projected CRS given by an EPSG code, definitions offline from
 * epsg-index). Errors (InputError): not a TIFF, no georeferencing, several bands without `band`, a band out of
 * range, no EPSG code, or an EPSG code with no offline definition. `band` is 1-based (GDAL's numbering).
 */
export async function readGridGeoTiff(
  bytes: Uint8Array,
  source: string,
  band?: number,
): Promise<{ grid: Grid<Float32Array>; crsDef: string; metadata: Record<string, unknown> }> {
  if (band !== undefined && !(Number.isInteger(band) && band >= 1))
    throw new InputError(
      `${source}: --band ${band} is out of range`,
      [{ feature: source, field: 'band', problem: 'expected a band number from 1' }],
      'bad_option',
    );
  const r = await readGeoTiff(bytes, { band: band === undefined ? undefined : band - 1, source, chooseBand: true });
  let crsDef: string;
  try {
    crsDef = await loadCrsDefinition(r.grid.crs);
  } catch (e) {
    throw new InputError(
      `${source}: unknown CRS ${r.grid.crs}`,
      [{ feature: source, field: 'crs', problem: e instanceof Error ? e.message : String(e) }],
      'bad_crs',
    );
  }
  return { grid: r.grid, crsDef, metadata: r.metadata };
}

function sameGrid(a: Grid<Float32Array>, b: Grid<Float32Array>): boolean {
  const close = (x: number, y: number) => Math.abs(x - y) <= 1e-9 * Math.max(1, Math.abs(x), Math.abs(y));
  return (
    a.width === b.width &&
    a.height === b.height &&
    a.crs === b.crs &&
    close(a.west, b.west) &&
    close(a.north, b.north) &&
    close(a.dx, b.dx) &&
    close(a.dy, b.dy)
  );
}

/**
 * Conditional simulations of the sites (--points and the shared simulation flags) on the heat-flow grid, a web
 * run's way (server/runs/heat-flow-simulation.ts): streams keyed by seed + 2³² (the model draws use the seed
 * itself); cells without heat flow stay no data.
 */
async function simulateOnHeatFlowGrid(
  a: SimulationArgs,
  heatFlow: Grid<Float32Array>,
  crsDef: string,
  realizations: number,
  seed: number,
): Promise<{ values: Float32Array; source: string; sha256: string; warnings: string[] }> {
  if ((a.field ?? 'heatFlowMWm2') !== 'heatFlowMWm2')
    throw new InputError('isotherms simulates heatFlowMWm2 (mW/m²)', [{ field: 'field', problem: 'expected heatFlowMWm2' }], 'bad_option');
  const { points, warnings, sha256 } = await readSimulationPoints(a);
  const r = simulateRunHeatFlow(points, heatFlowSimulationOptions(a), heatFlow, crsDef, realizations, seed);
  return { values: r.values, source: r.source, sha256, warnings: [...warnings, ...r.warnings.map((w) => `heat-flow simulation: ${w}`)] };
}

/**
 * Heat-flow realizations from a file written by `simulate --keep-realizations` (server/cli/realizations-file.ts):
 * they must be heat flow (mW/m²) on the heat-flow grid; `count` (the --realizations given, else all) takes the first
 * `count` of them (realization r does not depend on how many were simulated).
 */
async function realizationsFromFile(
  path: string,
  heatFlow: Grid<Float32Array>,
  withSd: boolean,
  count: number | null,
): Promise<{ values: Float32Array; source: string; sha256: string; warnings: string[] }> {
  if (withSd)
    throw new InputError(
      '--heat-flow-sd does not go with --realizations-from: the spread comes from the realizations',
      [{ field: 'heat-flow-sd', problem: 'drop it, or drop --realizations-from' }],
      'bad_option',
    );
  const { header: h, values } = await readRealizationsFile(path);
  if (h.units !== 'mW/m²')
    throw new InputError(
      `${path} holds ${h.field} in "${h.units}", not heat flow in mW/m²`,
      [{ feature: path, field: 'units', problem: 'expected realizations of heatFlowMWm2 (mW/m²)' }],
      'bad_realizations_file',
    );
  const grid = { ...heatFlow, ...h, values: heatFlow.values, units: h.units };
  if (!sameGrid(grid, heatFlow))
    throw new InputError(
      `${path} is not on the heat-flow grid (size, origin, cell size and CRS must match)`,
      [
        {
          feature: path,
          field: 'grid',
          problem: `expected ${heatFlow.width} × ${heatFlow.height} cells at ${heatFlow.west}, ${heatFlow.north} in ${heatFlow.crs}`,
        },
      ],
      'bad_realizations_file',
    );
  const n = count ?? h.realizations;
  if (!(n >= 1 && n <= h.realizations))
    throw new InputError(
      `--realizations ${n}: ${path} holds ${h.realizations} realizations`,
      [{ field: 'realizations', problem: `expected 1..${h.realizations} with --realizations-from` }],
      'bad_option',
    );
  const cells = heatFlow.width * heatFlow.height;
  return {
    values: values.subarray(0, n * cells),
    source: `heat flow from ${n} of the ${h.realizations} realizations in ${path} (${h.field}, seed ${h.seed}, written by ${String(h.provenance.verb ?? 'simulate')})`,
    sha256: h.dataSha256,
    warnings: [],
  };
}

export async function isotherms(argv: string[]): Promise<number> {
  const { values: a } = parseVerbArgs('isotherms', argv, {
    'heat-flow': { type: 'string' },
    band: { type: 'string' },
    'heat-flow-sd': { type: 'string' },
    model: { type: 'string' },
    isotherms: { type: 'string' },
    'depths-km': { type: 'string' },
    'facies-depth-km': { type: 'string' },
    'max-depth-km': { type: 'string' },
    overrides: { type: 'string' },
    'contour-interval-km': { type: 'string' },
    'contour-interval-c': { type: 'string' },
    realizations: { type: 'string' },
    seed: { type: 'string' },
    'heat-flow-error-correlation': { type: 'string' },
    'out-dir': { type: 'string' },
    'realizations-from': { type: 'string' },
    ...SIMULATION_OPTIONS,
  });
  if (a.help) {
    process.stdout.write(HELP);
    return 0;
  }
  const need = (k: 'heat-flow' | 'model' | 'out-dir') => {
    const v = a[k];
    if (v === undefined) throw new InputError(`--${k} is required`, [{ field: k, problem: 'missing' }], 'bad_option');
    return v;
  };
  const hfPath = need('heat-flow'),
    modelPath = need('model'),
    outDir = need('out-dir');
  // 300 and 500 °C unless asked otherwise, as in every other verb and the map.
  const isothermsC = numberListOption('isotherms', a.isotherms, [300, 500]);
  const depthsKm = numberListOption('depths-km', a['depths-km'], []);
  for (const d of depthsKm)
    if (!(d > 0)) throw new InputError(`--depths-km must be > 0, got ${d}`, [{ field: 'depths-km', problem: 'expected depths > 0 km' }], 'bad_option');
  const faciesDepthKm =
    a['facies-depth-km'] !== undefined ? numberOption('facies-depth-km', a['facies-depth-km']) : depthsKm.length > 0 ? Math.max(...depthsKm) : 10;
  if (!(faciesDepthKm > 0))
    throw new InputError(`--facies-depth-km must be > 0, got ${faciesDepthKm}`, [{ field: 'facies-depth-km', problem: 'expected > 0 km' }], 'bad_option');
  const maxDepthKm = a['max-depth-km'] !== undefined ? numberOption('max-depth-km', a['max-depth-km']) : undefined;
  if (maxDepthKm !== undefined && !(maxDepthKm > 0))
    throw new InputError(`--max-depth-km must be > 0, got ${maxDepthKm}`, [{ field: 'max-depth-km', problem: 'expected > 0 km' }], 'bad_option');
  const contourIntervalKm = a['contour-interval-km'] !== undefined ? numberOption('contour-interval-km', a['contour-interval-km']) : 1;
  const contourIntervalC = a['contour-interval-c'] !== undefined ? numberOption('contour-interval-c', a['contour-interval-c']) : undefined;
  for (const [k, v] of [
    ['contour-interval-km', contourIntervalKm],
    ['contour-interval-c', contourIntervalC],
  ] as const) {
    if (v !== undefined && !(v > 0)) throw new InputError(`--${k} must be > 0, got ${v}`, [{ field: k, problem: 'expected > 0' }], 'bad_option');
  }
  let realizations = a.realizations !== undefined ? numberOption('realizations', a.realizations) : 0;
  if (!(Number.isInteger(realizations) && realizations >= 0 && realizations <= 100000))
    throw new InputError(
      `--realizations must be an integer in 0..100000, got ${a.realizations}`,
      [{ field: 'realizations', problem: 'expected a whole number' }],
      'bad_option',
    );
  const seed = a.seed !== undefined ? numberOption('seed', a.seed) : 0;
  if (!(Number.isInteger(seed) && seed >= 0 && seed <= 2 ** 32 - 1))
    throw new InputError(
      `--seed must be an integer in 0..4294967295, got ${a.seed}`,
      [{ field: 'seed', problem: 'expected a whole number ≥ 0' }],
      'bad_option',
    );
  const corr = a['heat-flow-error-correlation'] ?? 'full';
  if (corr !== 'full' && corr !== 'independent')
    throw new InputError(
      `--heat-flow-error-correlation must be full or independent, got "${corr}"`,
      [{ field: 'heat-flow-error-correlation', problem: 'expected full or independent' }],
      'bad_option',
    );
  const band = a.band !== undefined ? numberOption('band', a.band) : undefined;

  // Inputs.
  const hfBytes = await readBytes(hfPath, 'heat-flow');
  const hf = await readGridGeoTiff(hfBytes, hfPath, band);
  const heatFlow: Grid<Float32Array> = { ...hf.grid, units: 'mW/m²' };
  const inputs: Record<string, string> = { heatFlow: sha256Hex(hfBytes) };
  let heatFlowSd: Grid<Float32Array> | null = null;
  if (a['heat-flow-sd'] !== undefined) {
    const sdBytes = await readBytes(a['heat-flow-sd'], 'heat-flow-sd');
    const sd = await readGridGeoTiff(sdBytes, a['heat-flow-sd'], band);
    if (!sameGrid(sd.grid, heatFlow))
      throw new InputError(
        `${a['heat-flow-sd']} is not on the heat-flow grid (size, origin, cell size and CRS must match)`,
        [
          {
            feature: a['heat-flow-sd'],
            field: 'grid',
            problem: `expected ${heatFlow.width} × ${heatFlow.height} cells at ${heatFlow.west}, ${heatFlow.north} in ${heatFlow.crs}`,
          },
        ],
        'bad_geotiff',
      );
    heatFlowSd = { ...sd.grid, west: heatFlow.west, north: heatFlow.north, dx: heatFlow.dx, dy: heatFlow.dy, units: 'mW/m²' };
    inputs.heatFlowSd = sha256Hex(sdBytes);
  }
  // --points: the Monte Carlo's heat flow comes from conditional simulations of the sites on the heat-flow grid.
  let simulated: Awaited<ReturnType<typeof simulateOnHeatFlowGrid>> | null = null;
  if (a.points !== undefined && a['realizations-from'] !== undefined)
    throw new InputError(
      'give --points (simulate here) or --realizations-from (fields simulated before), not both',
      [{ field: 'realizations-from', problem: 'conflicts with --points' }],
      'bad_option',
    );
  if (a.points !== undefined) {
    if (heatFlowSd !== null)
      throw new InputError(
        '--heat-flow-sd does not go with --points: the spread comes from the conditional simulations',
        [{ field: 'heat-flow-sd', problem: 'drop it, or drop --points' }],
        'bad_option',
      );
    for (const k of ['cell-km', 'size', 'bbox', 'crs'] as const)
      if (a[k] !== undefined)
        throw new InputError(`--${k} does not go with isotherms: the grid is the heat-flow grid's`, [{ field: k, problem: 'drop it' }], 'bad_option');
    if (!(realizations >= 1))
      throw new InputError(
        '--points needs --realizations N (≥ 1): the percentiles come from N simulated heat-flow fields',
        [{ field: 'realizations', problem: 'missing' }],
        'bad_option',
      );
    simulated = await simulateOnHeatFlowGrid(a, heatFlow, hf.crsDef, realizations, seed);
    inputs.points = simulated.sha256;
  } else if (a['realizations-from'] !== undefined) {
    simulated = await realizationsFromFile(a['realizations-from'], heatFlow, heatFlowSd !== null, a.realizations === undefined ? null : realizations);
    realizations = simulated.values.length / (heatFlow.width * heatFlow.height);
    inputs.realizations = simulated.sha256;
  } else if (a['heat-flow-error-correlation'] !== undefined)
    process.stderr.write('warning: --heat-flow-error-correlation is deprecated: give --points SITES to simulate spatially coherent heat-flow fields\n');
  if (realizations > 0 && heatFlowSd === null && simulated === null)
    process.stderr.write('note: no --heat-flow-sd grid: the percentiles reflect the model parameters only\n');
  const modelText = (await readBytes(modelPath, 'model')).toString('utf8');
  const doc = parseModelText(modelText, modelPath);
  inputs.model = sha256Hex(modelText);
  const regions: OverrideRegion[] = [];
  if (a.overrides !== undefined) {
    const text = (await readBytes(a.overrides, 'overrides')).toString('utf8');
    let raw: unknown;
    try {
      raw = JSON.parse(text);
    } catch (e) {
      throw new InputError(`${a.overrides}: not valid JSON: ${(e as Error).message}`, [{ field: 'overrides', problem: 'not valid JSON' }], 'bad_geojson');
    }
    const ds = parseFeatureCollection('regions', raw);
    ds.collection.features.forEach((f, i) => {
      const props = f.properties ?? {};
      const label = `${a.overrides}: feature ${i}${props.id !== undefined ? ` (${String(props.id)})` : ''}`;
      const o = overrideFromProperties(props, label);
      if (o === null)
        throw new InputError(
          `${label} has no "layers": every override polygon needs them`,
          [{ feature: i, field: 'properties.layers', problem: 'missing' }],
          'invalid_override',
        );
      regions.push({ label, override: o, ringsLonLat: ringsOfGeometry(f.geometry) });
    });
    inputs.overrides = sha256Hex(text);
  }

  const t0 = performance.now();
  const products = await computeThermalProducts(heatFlow, heatFlowSd, doc.model, regions, hf.crsDef, {
    isothermsC,
    depthsKm,
    faciesDepthKm,
    maxDepthKm,
    contourIntervalKm,
    contourIntervalC,
    realizations,
    seed,
    heatFlowErrorCorrelation: corr,
    heatFlowRealizations: simulated?.values,
    heatFlowSource: simulated?.source,
  });
  const computeMs = performance.now() - t0;
  const provenance = buildProvenance(
    {
      method: 'isotherms',
      model: doc.model,
      modelName: doc.name,
      inputs,
      parameters: {
        isothermsC,
        depthsKm,
        faciesDepthKm,
        maxDepthKm: products.maxDepthKm,
        contourIntervalKm,
        contourIntervalC: contourIntervalC ?? null,
        realizations,
        seed,
        heatFlowErrorCorrelation: corr,
        band: band ?? null,
      },
    },
    sha256Hex,
  );

  // Files.
  const t1 = performance.now();
  try {
    await mkdir(outDir, { recursive: true });
  } catch (e) {
    throw new InputError(`cannot create --out-dir ${outDir}`, [{ field: 'out-dir', problem: (e as NodeJS.ErrnoException).code ?? String(e) }], 'bad_option');
  }
  const files: string[] = [];
  for (const l of products.layers) {
    const p = withMethod(provenance, l.method);
    const tif = join(outDir, `${l.name}.tif`);
    await writeGeoTiffFile(tif, l.grid, { description: `${l.title} (${l.units})`, metadata: { provenance: p }, classes: l.legend.type === 'classes' });
    files.push(tif);
    if (l.contours) {
      const gj = join(outDir, `${l.name}.contours.geojson`);
      await writeFile(gj, geojsonText(l.contours, withMethod(p, `contours of: ${l.method}`)));
      files.push(gj);
    }
  }
  const writeMs = performance.now() - t1;
  const summary = {
    caution: CAUTION,
    grid: { width: heatFlow.width, height: heatFlow.height, west: heatFlow.west, north: heatFlow.north, dx: heatFlow.dx, dy: heatFlow.dy, crs: heatFlow.crs },
    products: Object.fromEntries(products.layers.map((l) => [l.name, { units: l.units, ...l.stats, contourLines: l.contours?.features.length ?? null }])),
    inconsistent: products.counts,
    maxDepthKm: products.maxDepthKm,
    monteCarlo: products.monteCarlo,
    overrides: regions.map((r) => r.label),
    files: [...files, join(outDir, 'summary.json')],
    warnings: [...new Set([...(simulated?.warnings ?? []), ...products.warnings])],
    provenance,
    timingsMs: { compute: computeMs, write: writeMs },
  };
  await writeFile(join(outDir, 'summary.json'), JSON.stringify(summary, null, 2));
  if (a.json) process.stdout.write(JSON.stringify(summary) + '\n');
  else {
    const f = (v: number | null) => (v === null ? '—' : v.toFixed(2));
    process.stdout.write(`${CAUTION}\n\n${heatFlow.width} × ${heatFlow.height} cells (${heatFlow.crs}); searches to ${products.maxDepthKm} km\n`);
    process.stdout.write(
      `${'product'.padEnd(24)} ${'units'.padEnd(6)} ${'min'.padStart(9)} ${'median'.padStart(9)} ${'max'.padStart(9)} ${'no data'.padStart(9)}\n`,
    );
    for (const l of products.layers)
      process.stdout.write(
        `${l.name.padEnd(24)} ${l.units.padEnd(6)} ${f(l.stats.min).padStart(9)} ${f(l.stats.median).padStart(9)} ${f(l.stats.max).padStart(9)} ${String(l.stats.noData).padStart(9)}\n`,
      );
    process.stdout.write(`\ninconsistent cells: ${products.counts.inconsistent}; cells reaching the melt onset: ${products.counts.meltOnset}\n`);
    for (const w of summary.warnings) process.stdout.write(`warning: ${w}\n`);
    process.stdout.write(`\nfiles:\n${summary.files.map((p) => `  ${p}`).join('\n')}\n`);
  }
  // Cells inconsistent with the model are a finding about the results, not bad input: every file is written, the
  // warning says where to look, and the verb succeeds (exit 0).
  if (products.counts.inconsistent > 0) {
    process.stderr.write(`warning: ${products.counts.inconsistent} cell(s) are inconsistent with the heat flow; see ${join(outDir, 'inconsistent.tif')}\n`);
  }
  if (products.counts.meltOnset > 0) {
    process.stderr.write(
      `warning: ${products.counts.meltOnset} cell(s) reach the melt onset above ${products.maxDepthKm} km (no temperatures below it); see ${join(outDir, 'melt-onset.tif')}\n`,
    );
  }
  return 0;
}
