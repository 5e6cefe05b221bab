import { writeFile, mkdir } from 'node:fs/promises';
import { join } from 'node:path';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { ringsOfGeometry } from '../../shared/grid/polygon-cells.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { overrideFromProperties } from '../../shared/products/overrides.ts';
import { buildProvenance, withMethod } from '../../shared/products/provenance.ts';
import { CAUTION } from '../../shared/caution.ts';
import { writeGeoTiffFile } from '../io/geotiff.ts';
import { geojsonText, sha256Hex } from '../io/export.ts';
import { computeThermalProducts, type OverrideRegion } from '../../shared/products/thermal-products.ts';
import type { ProductCentralValue } from '../../shared/products/central-values.ts';
import { numberListOption, numberOption, parseVerbArgs } from './args.ts';
import { SIMULATION_OPTIONS } from './simulation-input.ts';
import { readBytes, readGridGeoTiff, realizationsFromFile, sameGrid, simulateOnHeatFlowGrid } from './isotherm-inputs.ts';

export { readGridGeoTiff } from './isotherm-inputs.ts';

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
  --realizations N --seed S   Monte Carlo → depth-<T>C.p10/.p50/.p90/.mean.tif and temperature-<d>km.p10/… .mean.tif
                              (the mean of the realizations is the central value), and .mean-diff.tif: that mean
                              minus the deterministic grid
  --heat-flow-error-correlation full|independent   (deprecated; default full) with --heat-flow-sd
  --points P.geojson|P.csv    instead of --heat-flow-sd: the realizations' heat flow is simulated conditionally from
                              these sites on the heat-flow grid (with --variogram, --anisotropy, --trend, --transform,
                              --decluster, --error-field, --neighbors, --lag-km, --max-lag-km, --points-crs as in
                              simulate)
  --realizations-from R.json  instead of --points: the heat-flow realizations written by simulate --keep-realizations
                              (its .json header; on the heat-flow grid); --realizations N uses the first N (default all)
  --out-dir DIR               where the files go
  --json                      print one JSON object
`;

/** The central values as a text table: the mean of the realizations first, the deterministic map beside it. */
export function centralValuesText(rows: ProductCentralValue[]): string {
  const f = (v: number | null) => (v === null ? '—' : v.toFixed(3));
  const lines = [
    'central values over the grid (mean of the realizations; the deterministic map beside it, averaged over the same cells):',
    `${'product'.padEnd(18)} ${'units'.padEnd(5)} ${'mean'.padStart(9)} ${'P50'.padStart(9)} ${'determ.'.padStart(9)} ${'mean−det.'.padStart(9)} ${'cells'.padStart(7)} ${'no mean'.padStart(7)}`,
    ...rows.map(
      (r) =>
        `${r.product.padEnd(18)} ${r.units.padEnd(5)} ${f(r.mean).padStart(9)} ${f(r.p50).padStart(9)} ${f(r.deterministic).padStart(9)} ${f(r.difference).padStart(9)} ${String(r.cells).padStart(7)} ${String(r.cellsMeanUndefined).padStart(7)}`,
    ),
    '"no mean": cells where some realization does not reach the isotherm above the search depth (or lies below the melt onset): the mean is unbounded there and left NoData',
  ];
  return lines.join('\n') + '\n';
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
    if (products.monteCarlo !== null) process.stdout.write(`\n${centralValuesText(products.monteCarlo.centralValues)}`);
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
