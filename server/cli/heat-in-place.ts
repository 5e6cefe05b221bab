/**
 * `subtherm heat-in-place`: volumetric heat in place of a heat-flow grid (or a polygon of it) between two depths,
 * in rock at or above a minimum temperature, with recoverable heat and electric power by the available-work
 * (exergy) route, optionally a Monte Carlo range, and CSV/HTML reports (shared/resource/assess.ts).
 *
 * JSON output: the report object of shared/resource/assess.ts. Every total is { nominal, p10, p50, p90, mean }:
 * nominal is the deterministic run; without --realizations the percentiles and mean are null.
 */
import { createHash } from 'node:crypto';
import { readFile, writeFile } from 'node:fs/promises';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import {
  assessHeatInPlace,
  parseAreaPolygon,
  parseHeatInPlaceOptions,
  parseZonePolygons,
  polygonsOf,
  reportCsv,
  zonesFromClassGrid,
  zonesFromPolygons,
  type AreaGeometry,
  type HeatInPlaceReport,
  type ZoneLabels,
} from '../../shared/resource/index.ts';
import { parseThermalModel, type ThermalModelInput } from '../../shared/schema/model.ts';
import { readGeoTiff } from '../io/geotiff.ts';
import { numberOption, parseVerbArgs } from './args.ts';
import { gridGeometry, outlineInGrid, resultHtml } from '../io/resource-output.ts';

const HELP = `subtherm heat-in-place --heat-flow G.tif --model M.json [options] [--json]

Volumetric heat in place and electric power (screening estimate).
  --heat-flow FILE          surface heat-flow GeoTIFF, mW/m² (required)
  --heat-flow-sd FILE       its standard deviation GeoTIFF (e.g. the kriging sd), mW/m²
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
  --correlation full|independent   heat-flow errors fully correlated (default) or independent per cell
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
    'heat-flow': { type: 'string' },
    'heat-flow-sd': { type: 'string' },
    model: { type: 'string' },
    polygon: { type: 'string' },
    zones: { type: 'string' },
    'zone-property': { type: 'string' },
    'min-temp-c': { type: 'string' },
    'top-km': { type: 'string' },
    'bottom-km': { type: 'string' },
    'ref-temp-c': { type: 'string' },
    'rho-c-mj': { type: 'string' },
    recovery: { type: 'string' },
    efficiency: { type: 'string' },
    'conversion-efficiency': { type: 'string' },
    'life-years': { type: 'string' },
    realizations: { type: 'string' },
    seed: { type: 'string' },
    correlation: { type: 'string' },
    'out-csv': { type: 'string' },
    'out-html': { type: 'string' },
  });
  if (v.help) {
    process.stdout.write(HELP);
    return 0;
  }
  const str = (k: string) => v[k as keyof typeof v] as string | undefined;
  if (str('heat-flow') === undefined) throw bad('heat-flow', 'missing: give --heat-flow G.tif');
  if (str('model') === undefined) throw bad('model', 'missing: give --model M.json');
  const num = (k: string) => (str(k) === undefined ? undefined : numberOption(k, str(k)));
  const realizations = num('realizations');
  if (realizations !== undefined && !(Number.isInteger(realizations) && realizations >= 0 && realizations <= 100_000)) throw bad('realizations', `must be an integer from 0 to 100000, got ${realizations}`);
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
  const flag: Record<string, string> = { minTempC: 'min-temp-c', topKm: 'top-km', bottomKm: 'bottom-km', refTempC: 'ref-temp-c', rhoCMJm3K: 'rho-c-mj', recoveryFactor: 'recovery', utilizationEfficiency: 'efficiency', conversionEfficiency: 'conversion-efficiency', lifeYears: 'life-years' };
  let options;
  try {
    options = parseHeatInPlaceOptions(raw);
  } catch (e) {
    if (e instanceof InputError) {
      const details = e.details.map((d) => ({ ...d, field: d.field !== undefined ? `--${flag[d.field] ?? d.field}` : undefined }));
      throw new InputError(details.map((d) => `${d.field}: ${d.problem}`).join('; '), details, 'bad_option');
    }
    throw e;
  }

  const hf = await readGrid(str('heat-flow')!, 'heat-flow');
  const sd = str('heat-flow-sd') !== undefined ? await readGrid(str('heat-flow-sd')!, 'heat-flow-sd') : undefined;
  const modelPath = str('model')!;
  const modelBytes = await readBytes(modelPath, 'model');
  const model: ThermalModelInput = parseThermalModel(parseJson(modelBytes.toString('utf8'), modelPath, 'model'), modelPath);
  const hashes: Record<string, string> = { heatFlow: hf.hash, model: sha256(modelBytes) };
  if (sd) hashes.heatFlowSd = sd.hash;

  let polygon: AreaGeometry | undefined;
  let polygonLabel: string | undefined;
  if (str('polygon') !== undefined) {
    const p = str('polygon')!;
    const b = await readBytes(p, 'polygon');
    const j = parseJson(b.toString('utf8'), p, 'polygon');
    polygon = parseAreaPolygon(j, p);
    const name = (j as { properties?: { name?: unknown } }).properties?.name;
    polygonLabel = typeof name === 'string' ? name : p.split('/').pop();
    hashes.polygon = sha256(b);
  }
  const zonesPath = str('zones');
  const geo = await gridGeometry(hf.grid, polygon !== undefined || (zonesPath !== undefined && !/\.tiff?$/i.test(zonesPath)));
  let zones: (ZoneLabels & { source: string }) | undefined;
  if (zonesPath !== undefined) {
    if (/\.tiff?$/i.test(zonesPath)) {
      const zg = await readGrid(zonesPath, 'zones');
      const a = zg.grid, g = hf.grid;
      if (a.width !== g.width || a.height !== g.height || a.crs !== g.crs || Math.abs(a.west - g.west) > 1e-9 * Math.max(1, Math.abs(g.dx)) || Math.abs(a.north - g.north) > 1e-9 * Math.max(1, Math.abs(g.dy))) {
        throw new InputError(`${zonesPath}: the class grid does not match the heat-flow grid`, [{ field: 'zones', problem: `expected ${g.width} × ${g.height} cells at the heat-flow grid's origin and CRS` }], 'grid_mismatch');
      }
      zones = { ...zonesFromClassGrid(a.values), source: 'class grid' };
      hashes.zones = zg.hash;
    } else {
      const b = await readBytes(zonesPath, 'zones');
      const regions = parseZonePolygons(parseJson(b.toString('utf8'), zonesPath, 'zones'), str('zone-property'), zonesPath);
      zones = { ...zonesFromPolygons(hf.grid, regions.map((r) => ({ name: r.name, polygons: polygonsOf(r.geometry) })), geo.centresLonLat), source: 'polygons' };
      hashes.zones = sha256(b);
    }
  }
  const res = assessHeatInPlace({
    heatFlow: hf.grid,
    heatFlowSd: sd?.grid,
    model,
    modelLabel: model.name ?? modelPath.split('/').pop(),
    polygon,
    polygonLabel,
    zones,
    centresLonLat: geo.centresLonLat,
    metresPerUnit: geo.metresPerUnit,
    toLonLat: geo.toLonLat,
    options,
    inputHashes: hashes,
  });
  const files: Record<string, string> = {};
  if (str('out-csv') !== undefined) {
    await writeFile(str('out-csv')!, reportCsv(res.report));
    files.csv = str('out-csv')!;
  }
  if (str('out-html') !== undefined) {
    await writeFile(str('out-html')!, resultHtml(res, outlineInGrid(polygon, geo.toGrid)));
    files.html = str('out-html')!;
  }
  const out = { ...res.report, files };
  if (v.json) {
    process.stdout.write(JSON.stringify(out) + '\n');
    return 0;
  }
  process.stdout.write(renderText(res.report, files));
  return 0;
}

function f(v: number | null, digits = 4): string {
  return v === null ? '—' : Math.abs(v) >= 1e6 || (Math.abs(v) < 1e-2 && v !== 0) ? v.toExponential(3) : v.toPrecision(digits);
}

function renderText(r: HeatInPlaceReport, files: Record<string, string>): string {
  const row = (label: string, t: { nominal: number | null; p10: number | null; p50: number | null; p90: number | null }) =>
    `  ${label.padEnd(44)} ${f(t.nominal).padStart(11)}  ${r.monteCarlo ? `P10 ${f(t.p10)}  P50 ${f(t.p50)}  P90 ${f(t.p90)}` : ''}`;
  const lines = [
    `Heat in place (${r.area === 'polygon' ? 'polygon' : 'whole grid'}): ${f(r.areaKm2)} km², ${r.cells} cells`,
    `  ${''.padEnd(44)} ${'nominal'.padStart(11)}`,
    row('heat in place (EJ)', r.heatInPlaceEJ),
    row('recoverable heat (J)', r.recoverableJ),
    row('thermal power, recoverable / life (MWt)', r.thermalMWt),
    row('electric, exergy route (MWe)', r.electricMWe),
  ];
  if ((r.inputs as { conversionEfficiency: unknown }).conversionEfficiency !== null) lines.push(row('electric, thermal × conversion (MWe)', r.electricMWeConversion));
  lines.push(row('mean reservoir temperature (°C)', r.meanReservoirTempC), '', `Route: ${r.method.routeLabel as string}`, String(r.method.percentiles), String(r.method.exceedance));
  for (const z of r.totals.zones ?? []) lines.push(`  zone ${z.zone}: ${f(z.areaKm2)} km², heat ${f(z.heatInPlaceEJ.nominal)} EJ, electric ${f(z.electricMWe.nominal)} MWe (nominal)`);
  if (r.warnings.length) lines.push('', 'Warnings:', ...r.warnings.map((w) => `  - ${w}`));
  for (const [k, p] of Object.entries(files)) lines.push(`wrote ${k}: ${p}`);
  lines.push('', CAUTION, '');
  return lines.join('\n');
}
