/**
 * `subtherm isotherms`: the thermal products of a heat-flow grid and a thermal model (shared/products/
 * thermal-products.ts, the same function a web run uses), written as GeoTIFFs and contour GeoJSON with a summary.
 * Options: isotherm-options.ts; inputs and realizations: isotherm-inputs.ts; files and text: isotherm-output.ts.
 */
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { InputError } from '../../shared/errors.ts';
import { parseModelText } from '../../shared/products/model-input.ts';
import { buildProvenance } from '../../shared/products/provenance.ts';
import { CAUTION } from '../../shared/caution.ts';
import { sha256Hex } from '../io/export.ts';
import { computeThermalProducts, type OverrideRegion } from '../../shared/products/thermal-products.ts';
import { parseVerbArgs } from './args.ts';
import { heatFlowRealizationsOf, readBytes, readHeatFlowGrids } from './isotherm-inputs.ts';
import { ISOTHERM_OPTIONS, isothermNumbers, readOverrides } from './isotherm-options.ts';
import { findingWarnings, productsText, writeProductFiles } from './isotherm-output.ts';

export { readGridGeoTiff } from './isotherm-inputs.ts';
export { centralValuesText } from './isotherm-output.ts';

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
                              (the mean of the realizations is the central value), .mean-diff.tif: that mean
                              minus the deterministic grid, and depth-<T>C.reached.tif: the share of realizations
                              reaching the isotherm above the maximum depth (0–1; the mean is NoData below 1)
  --heat-flow-error-correlation full|independent   (deprecated; default full) with --heat-flow-sd
  --points P.geojson|P.csv    instead of --heat-flow-sd: the realizations' heat flow is simulated conditionally from
                              these sites on the heat-flow grid (with --variogram, --anisotropy, --directions,
                              --angle-tolerance, --bandwidth-km, --trend, --transform, --decluster, --error-field,
                              --neighbors, --lag-km, --max-lag-km, --points-crs as in simulate)
  --realizations-from R.json  instead of --points: the heat-flow realizations written by simulate --keep-realizations
                              (its .json header; on the heat-flow grid); --realizations N uses the first N (default all)
  --out-dir DIR               where the files go
  --json                      print one JSON object
`;

export async function isotherms(argv: string[]): Promise<number> {
  const { values: a } = parseVerbArgs('isotherms', argv, ISOTHERM_OPTIONS);
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
  const n = isothermNumbers(a);
  const tRead = performance.now();
  // CPU seconds of the whole process per stage (this thread, zlib's pool and any workers).
  const cpu0 = process.cpuUsage();
  const grids = await readHeatFlowGrids(hfPath, a['heat-flow-sd'], n.band);
  const { heatFlow, heatFlowSd, inputs } = grids;
  // --points or --realizations-from: the Monte Carlo's heat flow comes from those realizations.
  const { simulated, realizations } = await heatFlowRealizationsOf(a, grids, n.realizations, n.seed);
  const modelText = (await readBytes(modelPath, 'model')).toString('utf8');
  const doc = parseModelText(modelText, modelPath);
  inputs.model = sha256Hex(modelText);
  let regions: OverrideRegion[] = [];
  if (a.overrides !== undefined) ({ regions, sha256: inputs.overrides } = await readOverrides(a.overrides));

  const readMs = performance.now() - tRead;
  const cpuRead = process.cpuUsage();
  const t0 = performance.now();
  const { band, heatFlowErrorCorrelation, ...options } = n;
  const products = await computeThermalProducts(heatFlow, heatFlowSd, doc.model, regions, grids.crsDef, {
    ...options,
    realizations,
    heatFlowErrorCorrelation,
    heatFlowRealizations: simulated?.values,
    heatFlowSource: simulated?.source,
  });
  const computeMs = performance.now() - t0;
  const cpuCompute = process.cpuUsage();
  const parameters = {
    ...options,
    maxDepthKm: products.maxDepthKm,
    contourIntervalC: n.contourIntervalC ?? null,
    realizations,
    heatFlowErrorCorrelation,
    band: band ?? null,
  };
  const provenance = buildProvenance({ method: 'isotherms', model: doc.model, modelName: doc.name, inputs, parameters }, sha256Hex);

  // The layers' statistics and contour counts before the files are written (the writer lets each layer's contours go).
  const layerSummary = Object.fromEntries(
    products.layers.map((l) => [l.name, { units: l.units, ...l.stats, contourLines: l.contours?.features.length ?? null }]),
  );
  const t1 = performance.now();
  const files = await writeProductFiles(outDir, products, provenance);
  const writeMs = performance.now() - t1;
  const cpuWrite = process.cpuUsage();
  const cpuMs = (a: NodeJS.CpuUsage, b: NodeJS.CpuUsage) => (b.user + b.system - a.user - a.system) / 1000;
  const summary = {
    caution: CAUTION,
    grid: { width: heatFlow.width, height: heatFlow.height, west: heatFlow.west, north: heatFlow.north, dx: heatFlow.dx, dy: heatFlow.dy, crs: heatFlow.crs },
    products: layerSummary,
    inconsistent: products.counts,
    maxDepthKm: products.maxDepthKm,
    monteCarlo: products.monteCarlo,
    overrides: regions.map((r) => r.label),
    files: [...files, join(outDir, 'summary.json')],
    warnings: [...new Set([...(simulated?.warnings ?? []), ...products.warnings])],
    provenance,
    timingsMs: { read: readMs, ...products.timingsMs, compute: computeMs, write: writeMs },
    cpuMs: { read: cpuMs(cpu0, cpuRead), compute: cpuMs(cpuRead, cpuCompute), write: cpuMs(cpuCompute, cpuWrite) },
  };
  await writeFile(join(outDir, 'summary.json'), JSON.stringify(summary, null, 2));
  process.stdout.write(a.json ? JSON.stringify(summary) + '\n' : productsText(heatFlow, products, summary.warnings, summary.files));
  process.stderr.write(findingWarnings(products, outDir));
  return 0;
}
