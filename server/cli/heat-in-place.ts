/**
 * `subtherm heat-in-place`: volumetric heat in place of a heat-flow grid (or a polygon of it) between two depths,
 * in rock at or above a minimum temperature, with recoverable heat and electric power by the available-work
 * (exergy) route, optionally a Monte Carlo range, and CSV/HTML reports (shared/resource/assess.ts).
 *
 * JSON output: the report object of shared/resource/assess.ts. Every total is { nominal, p10, p50, p90, mean, sd,
 * meanMinusNominal }: the mean of the realizations is the central value, nominal the deterministic run beside it;
 * without --realizations all but nominal are null.
 */
import { createHash } from 'node:crypto';
import { readFile, writeFile } from 'node:fs/promises';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import {
  parseAreaPolygon,
  parseHeatInPlaceOptions,
  parseZonePolygons,
  reportCsv,
  zonesFromClassGrid,
  type AreaGeometry,
  type HeatInPlaceReport,
  type ZoneLabels,
} from '../../shared/resource/index.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';
import { readGeoTiff } from '../io/geotiff.ts';
import { numberOption, parseVerbArgs, textOptions } from './args.ts';
import {
  SIMULATION_HELP,
  SIMULATION_OPTIONS,
  gridOptionsFromArgs,
  readSimulationPoints,
  heatFlowSimulationOptions,
  type SimulationArgs,
} from './simulation-input.ts';
import { interpolateGrid } from '../../shared/interp/interpolate.ts';
import { WGS84_DEF } from '../../shared/interp/projection.ts';
import { followKrigedTrend, sharedKrigingOptions, SIMULATION_STREAM_OFFSET, simulateRunHeatFlow } from '../runs/heat-flow-simulation.ts';
import { assessOnGrid } from '../io/resource-output.ts';
import { trendOption } from './drift-input.ts';
import { renderText } from './heat-in-place-text.ts';

const HELP =
  `subtherm heat-in-place (--heat-flow G.tif | --points P.geojson --realizations N) --model M.json [options] [--json]

Volumetric heat in place and electric power (screening estimate).
  --heat-flow FILE          surface heat-flow GeoTIFF, mW/m²
  --heat-flow-sd FILE       its standard deviation GeoTIFF (e.g. the kriging sd), mW/m² (deprecated: use --points)
  --points FILE             heat-flow sites instead of --heat-flow: N conditional simulations of heat flow on the grid
                            below; the totals' mean (the central value) and P10/P50/P90 come from the per-realization
                            sums, the deterministic (nominal) value beside them from kriging;
                            the fields are a web run's for the same sites, grid, options and seed
  --points-crs EPSG:nnnn    CRS of a points CSV's x,y (easting,northing) columns
` +
  SIMULATION_HELP.split('\n')
    .filter((l) => !/--points P|--field/.test(l))
    .join('\n') +
  `
  --model FILE              thermal model JSON (required; distributions allowed)
  --polygon FILE            GeoJSON Polygon/MultiPolygon (or Feature/FeatureCollection) to total over;
                            a cell counts when its centre is inside
  --zones FILE              class layer for per-zone totals: region polygons (.geojson) or a class grid (.tif)
  --zone-property NAME      property naming each region polygon (default: the feature id or index)
  --min-temp-c T            minimum rock temperature counted, °C (default 150)
  --top-km Z                top of the assessed rock, km (default 3)
  --bottom-km Z             maximum drillable depth, km (default 7)
  --ref-temp-c T            reference temperature Tref = T0, °C (default 15)
  --rho-c-mj C              volumetric heat capacity, MJ/m³/K (default 2.7)
  --recovery R              recovery factor, (0, 1] (default 0.1)
  --efficiency E            utilization efficiency of the available work, (0, 1] (default 0.4)
  --conversion-efficiency E also report the thermal × conversion-efficiency route with this efficiency
  --life-years Y            plant life, Julian years (default 30)
      (the five options above take a number or a distribution as JSON, e.g. '{"dist":"triangular","min":0.05,"mode":0.1,"max":0.2}')
  --realizations N          Monte Carlo realizations (default 0: deterministic only)
  --seed S                  seed (integer, default 1)
  --correlation full|independent   (deprecated) with --heat-flow-sd: errors fully correlated (default) or per cell
  --out-csv FILE            write the totals as CSV
  --out-html FILE           write the printable HTML report
  --json                    print one JSON object
`;

const bad = (field: string, problem: string) => new InputError(`--${field}: ${problem}`, [{ field, problem }], 'bad_option');

async function readBytes(path: string, field: string): Promise<Buffer> {
  try {
    return await readFile(path);
  } catch (e) {
    throw new InputError(`cannot read ${path}: ${(e as Error).message}`, [{ field, problem: `file ${path} cannot be read` }], 'bad_file');
  }
}

function parseJson(text: string, path: string, field: string): unknown {
  try {
    return JSON.parse(text);
  } catch (e) {
    throw new InputError(`${path}: not valid JSON: ${(e as Error).message}`, [{ field, problem: 'not valid JSON' }], 'bad_file');
  }
}

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

async function readGrid(path: string, field: string): Promise<{ grid: Grid<Float32Array>; hash: string }> {
  const b = await readBytes(path, field);
  const ab = b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength) as ArrayBuffer;
  const r = await readGeoTiff(ab, { source: path });
  return { grid: r.grid, hash: sha256(b) };
}

/** A number, or a distribution written as JSON. */
function uncertainOption(name: string, raw: string | undefined): unknown {
  if (raw === undefined) return undefined;
  const s = raw.trim();
  if (s.startsWith('{')) {
    try {
      return JSON.parse(s);
    } catch {
      throw bad(name, `expected a number or a JSON distribution, got ${raw}`);
    }
  }
  return numberOption(name, raw);
}

export async function heatInPlace(argv: string[]): Promise<number> {
  const { values: v } = parseVerbArgs('heat-in-place', argv, {
    ...textOptions('heat-flow heat-flow-sd model polygon zones zone-property min-temp-c top-km bottom-km ref-temp-c rho-c-mj recovery efficiency'),
    ...textOptions('conversion-efficiency life-years realizations seed correlation out-csv out-html'),
    ...SIMULATION_OPTIONS,
  });
  if (v.help) {
    process.stdout.write(HELP);
    return 0;
  }
  const str = (k: string) => v[k as keyof typeof v] as string | undefined;
  const fromPoints = str('points') !== undefined;
  checkSources(str, fromPoints);
  const { options, corr } = assessmentOptions(str);

  const extraWarnings: string[] = [];
  if (corr !== undefined)
    extraWarnings.push(
      `--correlation is deprecated: ${fromPoints ? 'with --points the realizations are conditional simulations and it is not used' : 'give --points P.geojson instead of --heat-flow/--heat-flow-sd to simulate spatially coherent heat-flow fields from the sites'}`,
    );
  let simulated: PointsHeatFlow | undefined;
  if (fromPoints) simulated = await heatFlowFromPoints(v, options.realizations, options.seed);
  const hf = simulated?.kriged ?? (await readGrid(str('heat-flow')!, 'heat-flow'));
  const sd = str('heat-flow-sd') !== undefined ? await readGrid(str('heat-flow-sd')!, 'heat-flow-sd') : undefined;
  const modelPath = str('model')!;
  const modelBytes = await readBytes(modelPath, 'model');
  const model: ThermalModelInput = parseThermalModel(parseJson(modelBytes.toString('utf8'), modelPath, 'model'), modelPath);
  const hashes: Record<string, string> = { [fromPoints ? 'points' : 'heatFlow']: hf.hash, model: sha256(modelBytes) };
  if (sd) hashes.heatFlowSd = sd.hash;
  if (simulated?.driftHash) hashes.drift = simulated.driftHash;

  const { polygon, polygonLabel } = str('polygon') === undefined ? {} : await readPolygon(str('polygon')!, hashes);
  const { zones, zonePolygons } = str('zones') === undefined ? {} : await readZones(str('zones')!, str('zone-property'), hf.grid, hashes);
  const { result: res, html } = await assessOnGrid({
    heatFlow: hf.grid,
    heatFlowSd: sd?.grid,
    heatFlowRealizations: simulated?.realizations,
    model,
    modelLabel: model.name ?? modelPath.split('/').pop(),
    polygon,
    polygonLabel,
    zones,
    zonePolygons,
    options,
    inputHashes: hashes,
  });
  const files = await writeReports(str('out-csv'), str('out-html'), res.report, html);
  res.report.warnings.unshift(...extraWarnings, ...(simulated?.warnings ?? []));
  const out = { ...res.report, ...(simulated === undefined ? {} : { simulation: simulated.report }), files };
  if (v.json) {
    process.stdout.write(JSON.stringify(out) + '\n');
    return 0;
  }
  process.stdout.write(renderText(res.report, files));
  return 0;
}

/** Writes the CSV totals and the printable HTML page where asked; the paths written, by kind. */
async function writeReports(
  csv: string | undefined,
  htmlPath: string | undefined,
  report: HeatInPlaceReport,
  html: () => string,
): Promise<Record<string, string>> {
  const files: Record<string, string> = {};
  if (csv !== undefined) {
    await writeFile(csv, reportCsv(report));
    files.csv = csv;
  }
  if (htmlPath !== undefined) {
    await writeFile(htmlPath, html());
    files.html = htmlPath;
  }
  return files;
}

/** The heat-flow source (a grid or sites, not both) and the model are given. */
function checkSources(str: (k: string) => string | undefined, fromPoints: boolean): void {
  if (fromPoints && str('heat-flow') !== undefined) throw bad('points', 'give --points (simulate heat flow from the sites) or --heat-flow G.tif, not both');
  if (fromPoints && str('heat-flow-sd') !== undefined)
    throw bad('heat-flow-sd', 'does not go with --points: the spread comes from the conditional simulations');
  if (!fromPoints && str('heat-flow') === undefined) throw bad('heat-flow', 'missing: give --heat-flow G.tif, or --points P.geojson to simulate heat flow');
  if (str('model') === undefined) throw bad('model', 'missing: give --model M.json');
}

/** The assessment options from the flags (numbers or JSON distributions), errors naming the flag. */
function assessmentOptions(str: (k: string) => string | undefined): { options: ReturnType<typeof parseHeatInPlaceOptions>; corr: string | undefined } {
  const num = (k: string) => (str(k) === undefined ? undefined : numberOption(k, str(k)));
  const realizations = num('realizations');
  if (realizations !== undefined && !(Number.isInteger(realizations) && realizations >= 0 && realizations <= 100_000))
    throw bad('realizations', `must be an integer from 0 to 100000, got ${realizations}`);
  const seed = num('seed');
  if (seed !== undefined && !Number.isSafeInteger(seed)) throw bad('seed', `must be an integer, got ${seed}`);
  const corr = str('correlation');
  if (corr !== undefined && corr !== 'full' && corr !== 'independent') throw bad('correlation', `expected full or independent, got ${corr}`);
  const raw: Record<string, unknown> = {
    minTempC: num('min-temp-c'),
    topKm: num('top-km'),
    bottomKm: num('bottom-km'),
    refTempC: num('ref-temp-c'),
    rhoCMJm3K: uncertainOption('rho-c-mj', str('rho-c-mj')),
    recoveryFactor: uncertainOption('recovery', str('recovery')),
    utilizationEfficiency: uncertainOption('efficiency', str('efficiency')),
    conversionEfficiency: uncertainOption('conversion-efficiency', str('conversion-efficiency')),
    lifeYears: num('life-years'),
    realizations,
    seed,
    heatFlowErrorCorrelation: corr,
  };
  for (const k of Object.keys(raw)) if (raw[k] === undefined) delete raw[k];
  const flag: Record<string, string> = {
    minTempC: 'min-temp-c',
    topKm: 'top-km',
    bottomKm: 'bottom-km',
    refTempC: 'ref-temp-c',
    rhoCMJm3K: 'rho-c-mj',
    recoveryFactor: 'recovery',
    utilizationEfficiency: 'efficiency',
    conversionEfficiency: 'conversion-efficiency',
    lifeYears: 'life-years',
  };
  let options: ReturnType<typeof parseHeatInPlaceOptions>;
  try {
    options = parseHeatInPlaceOptions(raw);
  } catch (e) {
    if (e instanceof InputError) {
      const details = e.details.map((d) => ({ ...d, field: d.field !== undefined ? `--${flag[d.field] ?? d.field}` : undefined }));
      throw new InputError(details.map((d) => `${d.field}: ${d.problem}`).join('; '), details, 'bad_option');
    }
    throw e;
  }
  return { options, corr };
}

/** The --polygon to total over (GeoJSON) and its label (its name, else the file name), hashed into `hashes`. */
async function readPolygon(p: string, hashes: Record<string, string>): Promise<{ polygon: AreaGeometry; polygonLabel: string | undefined }> {
  const b = await readBytes(p, 'polygon');
  const j = parseJson(b.toString('utf8'), p, 'polygon');
  const name = (j as { properties?: { name?: unknown } }).properties?.name;
  hashes.polygon = sha256(b);
  return { polygon: parseAreaPolygon(j, p), polygonLabel: typeof name === 'string' ? name : p.split('/').pop() };
}

/** Per-zone classes: a class grid (.tif, on the heat-flow grid) or region polygons (GeoJSON), hashed into `hashes`. */
async function readZones(
  zonesPath: string,
  zoneProperty: string | undefined,
  grid: Grid<Float32Array>,
  hashes: Record<string, string>,
): Promise<{ zones?: ZoneLabels & { source: string }; zonePolygons?: { name: string; geometry: AreaGeometry }[] }> {
  if (/\.tiff?$/i.test(zonesPath)) {
    const zg = await readGrid(zonesPath, 'zones');
    const a = zg.grid,
      g = grid;
    if (
      a.width !== g.width ||
      a.height !== g.height ||
      a.crs !== g.crs ||
      Math.abs(a.west - g.west) > 1e-9 * Math.max(1, Math.abs(g.dx)) ||
      Math.abs(a.north - g.north) > 1e-9 * Math.max(1, Math.abs(g.dy))
    ) {
      throw new InputError(
        `${zonesPath}: the class grid does not match the heat-flow grid`,
        [{ field: 'zones', problem: `expected ${g.width} × ${g.height} cells at the heat-flow grid's origin and CRS` }],
        'grid_mismatch',
      );
    }
    hashes.zones = zg.hash;
    return { zones: { ...zonesFromClassGrid(a.values), source: 'class grid' } };
  } else {
    const b = await readBytes(zonesPath, 'zones');
    hashes.zones = sha256(b);
    return { zonePolygons: parseZonePolygons(parseJson(b.toString('utf8'), zonesPath, 'zones'), zoneProperty, zonesPath) };
  }
}

interface PointsHeatFlow {
  /** The kriged heat-flow grid (the deterministic "nominal" run), on the simulation's grid. */
  kriged: { grid: Grid<Float32Array>; hash: string };
  /** SHA-256 of an external drift's covariate grid, or null. */
  driftHash: string | null;
  realizations: { values: Float32Array; source: string };
  report: Record<string, unknown>;
  warnings: string[];
}

/**
 * Heat flow from the sites: the kriged grid (the nominal run; ordinary kriging of the heat flow itself, as a web
 * run's heat-flow map) and, on that grid, the conditional simulations of a web run (server/runs/heat-flow-simulation.ts,
 * the one function both call): the same sites, options, grid and seed give the same fields, so the totals' P10/P50/P90
 * equal those of a heat-in-place job over a run made with the same inputs. The simulation draws from streams keyed by
 * seed + 2³², the model and parameter draws from streams keyed by the seed (independent of each other).
 */
async function heatFlowFromPoints(v: SimulationArgs, realizations: number, seed: number): Promise<PointsHeatFlow> {
  if (!(realizations >= 1))
    throw bad('realizations', "give --realizations N (≥ 1) with --points: the totals' P10/P50/P90 come from N simulated heat-flow fields");
  if (!(Number.isInteger(seed) && seed >= 0 && seed < SIMULATION_STREAM_OFFSET))
    throw bad('seed', `with --points the seed must be an integer from 0 to ${SIMULATION_STREAM_OFFSET - 1}, got ${seed}`);
  if ((v.field ?? 'heatFlowMWm2') !== 'heatFlowMWm2') throw bad('field', 'heat in place simulates heatFlowMWm2 (mW/m²)');
  const { points, warnings, sha256 } = await readSimulationPoints(v);
  const trendChoice = await trendOption(v.trend);
  const so = heatFlowSimulationOptions(v, trendChoice);
  const grid = await gridOptionsFromArgs(v);
  // A fixed variogram of normal scores does not apply to the values: the kriged grid then fits its own.
  const scoreVariogram = so.transform !== 'none' && typeof so.variogram === 'object';
  const kr = interpolateGrid(points, {
    method: 'kriging',
    ...sharedKrigingOptions(so),
    variogram: scoreVariogram ? 'auto' : so.variogram,
    grid,
    sd: false,
    crossValidation: false,
    units: 'mW/m²',
  });
  const trend = followKrigedTrend(so.trend, kr.variogram?.trend?.kind);
  const sim = simulateRunHeatFlow(points, { ...so, trend }, kr.grid, grid.crsDef ?? WGS84_DEF, realizations, seed);
  return {
    kriged: { grid: kr.grid, hash: sha256 },
    driftHash: trendChoice.sha256,
    realizations: { values: sim.values, source: sim.source },
    report: {
      ...sim.report,
      nominal: `the nominal run uses the kriged heat-flow grid (${(trend ?? 'none') === 'none' ? 'ordinary kriging' : `universal kriging, ${trend === 'external' ? `external drift ${trendChoice.externalDrift?.name}` : `trend ${trend}`}`} of the values); p10/p50/p90 and mean come from the simulated fields`,
    },
    warnings: [...warnings, ...sim.warnings.map((w) => `heat-flow simulation: ${w}`), ...kr.warnings.map((w) => `kriged grid: ${w}`)],
  };
}
