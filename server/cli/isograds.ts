/**
 * `subtherm isograds`: isograd lines from graded samples (indicator surfaces honouring fault barriers), the fault
 * report (grade jump, missing and repeated zones, apparent separations), misfits and paleo-gradients
 * (DESIGN.md §4). Writes the lines as GeoJSON with the caution and provenance (tool version, method, input sha256).
 */
import { readFile, writeFile } from 'node:fs/promises';
import { createHash } from 'node:crypto';
import { InputError } from '../../shared/errors.ts';
import { type FaultCollection, type SampleCollection } from '../../shared/schema/features.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';
import { compileModel, nominalModel, type CompiledModel } from '../../shared/thermal/index.ts';
import { isogradLayer, DEFAULT_PALEO_DENSITY_KG_M3, type FaultSummary, type IsogradReport, type Range } from '../../shared/structure/index.ts';
import { numberOption, parseVerbArgs, textOptions } from './args.ts';
import { parseVariogramOption } from '../../shared/schema/interp.ts';
import type { VariogramModel } from '../../shared/interp/variogram.ts';
import { readDatasetFile } from '../io/vector-input.ts';

const HELP = `subtherm isograds --samples S.geojson [options] --out I.geojson [--json]

Isograds from grade samples (zone, facies or peak P–T), with a fault report (screening estimate).
  --samples FILE            grade samples (required): GeoJSON Points, GeoPackage (.gpkg), zipped Shapefile (.zip)
                            or CSV (longitude,latitude, or x,y / easting,northing with --points-crs)
  --points-crs EPSG:nnnn    CRS of a CSV's x,y (easting,northing) columns
  --layer NAME              the layer of a GeoPackage or zipped Shapefile holding several
  --faults FILE             fault traces, GeoJSON LineStrings (or a .gpkg / .zip layer: --faults-layer NAME):
                            barriers, and one report per fault
  --faults-layer NAME       the layer of --faults to read
  --model FILE              thermal model JSON: today's geotherm for the paleo-gradient comparison
  --heat-flow Q             surface heat flow for that geotherm, mW/m² (default: the model's)
  --fault-distance-km D     samples within D km of a fault count for its report (default 10)
  --cell-km C               indicator grid cell, km (default 1)
  --support-km S            draw lines only within S km of a sample (default 2.5 × median sample spacing)
  --method M                kriging (indicator kriging, default) or idw
  --neighbors K             nearest samples per estimate (default 16 for kriging, 12 for idw)
  --power P                 inverse-distance power for --method idw (default 2)
  --variogram V             auto (default: each isograd's indicator variogram fitted, else the median-indicator
                            one) or MODEL:NUGGET,PARTIAL_SILL,RANGE_KM for every isograd (--method kriging)
  --isograd-dip-deg A       dip of the isograd surfaces towards lower grade, degrees: gives the dip-slip
                            component of each separation on faults with dipDeg and dipDirectionDeg
  --density-kg-m3 RHO       overburden density for depth from peak pressure (default ${DEFAULT_PALEO_DENSITY_KG_M3})
  --out FILE                write the isograd lines (GeoJSON) here
  --json                    print one JSON object
`;

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

async function readBytes(path: string, field: string): Promise<Buffer> {
  try {
    return await readFile(path);
  } catch (e) {
    throw new InputError(`cannot read ${field} file ${path}: ${(e as Error).message}`, [{ field, problem: `file ${path} cannot be read` }], 'bad_file');
  }
}

async function readJson(path: string, field: string): Promise<{ raw: unknown; hash: string }> {
  let b: Buffer;
  try {
    b = await readFile(path);
  } catch (e) {
    throw new InputError(`cannot read ${field} file ${path}: ${(e as Error).message}`, [{ field, problem: `file ${path} cannot be read` }], 'bad_file');
  }
  try {
    return { raw: JSON.parse(b.toString('utf8')), hash: sha256(b) };
  } catch (e) {
    throw new InputError(`${path}: not valid JSON: ${(e as Error).message}`, [{ field, problem: 'not valid JSON' }], 'bad_file');
  }
}

/** Re-throws an InputError with the file name in front of its message. */
function inFile<T>(path: string, f: () => T): T {
  try {
    return f();
  } catch (e) {
    if (e instanceof InputError) throw new InputError(`${path}: ${e.message}`, e.details, e.code);
    throw e;
  }
}

const r3 = (v: number | null) => (v === null || !Number.isFinite(v) ? null : Math.round(v * 1000) / 1000);

const ARG_SPEC = {
  ...textOptions('samples points-crs layer faults-layer faults model heat-flow fault-distance-km cell-km support-km neighbors method'),
  ...textOptions('isograd-dip-deg power variogram density-kg-m3 out'),
} as const;

type Values = Partial<Record<keyof typeof ARG_SPEC, string>>;

const bad = (field: string, problem: string) => new InputError(`--${field}: ${problem}`, [{ field, problem }], 'bad_option');

/** The verb's numeric and named options, each checked against its range (InputError naming the option). */
function computeOptions(v: Values) {
  const faultDistanceKm = numberOption('fault-distance-km', v['fault-distance-km'], 10);
  if (!(faultDistanceKm > 0)) throw bad('fault-distance-km', `must be > 0 km, got ${faultDistanceKm}`);
  const cellKm = numberOption('cell-km', v['cell-km'], 1);
  if (!(cellKm > 0)) throw bad('cell-km', `must be > 0 km, got ${cellKm}`);
  const supportKm = v['support-km'] === undefined ? undefined : numberOption('support-km', v['support-km']);
  if (supportKm !== undefined && !(supportKm > 0)) throw bad('support-km', `must be > 0 km, got ${supportKm}`);
  const method = v.method ?? 'kriging';
  if (method !== 'kriging' && method !== 'idw') throw bad('method', `expected kriging or idw, got '${method}'`);
  const isogradDipDeg = v['isograd-dip-deg'] === undefined ? undefined : numberOption('isograd-dip-deg', v['isograd-dip-deg']);
  if (isogradDipDeg !== undefined && !(isogradDipDeg > 0 && isogradDipDeg < 90))
    throw bad('isograd-dip-deg', `must be between 0 and 90 degrees (exclusive), got ${isogradDipDeg}`);
  const neighbors = numberOption('neighbors', v.neighbors, method === 'kriging' ? 16 : 12);
  if (!(Number.isInteger(neighbors) && neighbors >= 1 && neighbors <= 1000)) throw bad('neighbors', `must be an integer from 1 to 1000, got ${neighbors}`);
  const power = numberOption('power', v.power, 2);
  if (!(power > 0 && power <= 10)) throw bad('power', `must be in (0, 10], got ${power}`);
  const density = numberOption('density-kg-m3', v['density-kg-m3'], DEFAULT_PALEO_DENSITY_KG_M3);
  if (!(density >= 1000 && density <= 4000)) throw bad('density-kg-m3', `must be within 1000–4000 kg/m³, got ${density}`);
  const heatFlow = v['heat-flow'] === undefined ? undefined : numberOption('heat-flow', v['heat-flow']);
  if (heatFlow !== undefined && !(heatFlow > 0)) throw bad('heat-flow', `must be > 0 mW/m², got ${heatFlow}`);
  return { faultDistanceKm, cellKm, supportKm, method, isogradDipDeg, neighbors, power, density, heatFlow, variogram: indicatorVariogram(v, method) } as const;
}

/** `--variogram`: auto (undefined: fitted per isograd) or one model for every isograd, with indicator kriging only. */
function indicatorVariogram(v: Values, method: string): VariogramModel | undefined {
  const g = parseVariogramOption(v.variogram);
  if (g === 'auto') return undefined;
  if (typeof g === 'string') throw bad('variogram', `give auto or MODEL:NUGGET,PARTIAL_SILL,RANGE_KM (each isograd's own fit is spherical), got '${g}'`);
  if (method !== 'kriging') throw bad('variogram', 'applies to --method kriging only');
  return g;
}

/** The samples, faults and model files, with each file's SHA-256 and the readers' warnings. */
async function readInputs(v: Values & { samples: string }, heatFlow: number | undefined, warnings: string[]) {
  const samplesPath = v.samples;
  const s = await readBytes(samplesPath, 'samples');
  const hashes: Record<string, string> = { samples: sha256(s) };
  const sp = await readDatasetFile(samplesPath, s, 'samples', { layer: v.layer, crs: v['points-crs'] });
  warnings.push(...sp.warnings.map((w) => `${samplesPath}: ${w}`));
  let faults: FaultCollection | null = null;
  if (v.faults !== undefined) {
    const fb = await readBytes(v.faults, 'faults');
    hashes.faults = sha256(fb);
    const fp = await readDatasetFile(v.faults, fb, 'faults', { layer: v['faults-layer'] });
    warnings.push(...fp.warnings.map((w) => `${v.faults}: ${w}`));
    faults = fp.collection as FaultCollection;
  }
  let model: CompiledModel | null = null;
  if (v.model !== undefined) {
    const m = await readJson(v.model, 'model');
    hashes.model = m.hash;
    const nominal = nominalModel(parseThermalModel(m.raw, v.model));
    if ((heatFlow ?? nominal.surfaceHeatFlowMWm2) === undefined)
      throw new InputError(
        `${v.model}: no surface heat flow`,
        [{ feature: 'model', field: 'surfaceHeatFlowMWm2', problem: 'missing: put it in the model or give --heat-flow' }],
        'invalid_model',
      );
    model = compileModel(nominal, { maxDepthKm: 100 });
  } else if (heatFlow !== undefined) warnings.push('--heat-flow has no effect without --model');
  return { samples: sp.collection as SampleCollection, faults, model, hashes };
}

/** A range as text, km: "value (low–high)", or "value (low–open: reason)" when its upper bound is open. */
export function rangeText(r: Range): string {
  return `${r.value} (${r.low}–${r.high === null ? `open: ${r.openReason ?? 'no bound'}` : r.high})`;
}

/** The plain-text summary: isograds, each fault's statements and separations, counts, warnings, files, caution. */
function summaryText(rep: IsogradReport, faults: FaultSummary[], warnings: string[], files: string[], caution: string): string {
  const lines = [`isograds: ${rep.isograds.map((i) => `${i.isograd} ${i.lines} line(s), ${i.lengthKm} km`).join('; ')}`, `method: ${rep.method.indicator}`];
  for (const f of faults) {
    const st = [
      f.repeatedZones.length > 0 ? `repeated: ${f.repeatedZones.map((z) => z.zone).join(', ')}` : '',
      f.missingZones.length > 0 ? `missing: ${f.missingZones.map((z) => z.zone).join(', ')}` : '',
      f.notReached.length > 0 ? `not reached: ${f.notReached.map((z) => `${z.isograd} (${z.sideName})`).join(', ')}` : '',
      f.offsetOnly ? 'offset only' : '',
    ].filter((x) => x !== '');
    lines.push(`fault ${f.id}: ${st.join('; ') || 'no statement'}`);
    for (const q of f.separations)
      lines.push(
        `  ${q.isograd} at the ${q.end} end: separation ${rangeText(q.separationKm)} km, ${q.sense}${q.dipSlipKm !== undefined ? `, dip slip ${rangeText(q.dipSlipKm)} km ${q.slipSense}` : ''}`,
      );
  }
  lines.push(`misfits: ${rep.misfits.length}; paleo-gradients: ${rep.paleoGradients.length}`);
  for (const w of warnings) lines.push(`warning: ${w}`);
  if (files.length > 0) lines.push(`wrote ${files.join(', ')}`);
  lines.push(caution);
  return lines.join('\n') + '\n';
}

export async function isograds(argv: string[]): Promise<number> {
  const { values: v } = parseVerbArgs('isograds', argv, ARG_SPEC);
  if (v.help) {
    process.stdout.write(HELP);
    return 0;
  }
  if (v.samples === undefined) throw bad('samples', 'missing: give --samples S.geojson');
  const o = computeOptions(v);
  const warnings: string[] = [];
  const inputs = await readInputs({ ...v, samples: v.samples }, o.heatFlow, warnings);
  const layer = inFile(v.samples, () =>
    isogradLayer(inputs.samples, inputs.faults, {
      cellKm: o.cellKm,
      supportKm: o.supportKm,
      neighbors: o.neighbors,
      power: o.power,
      method: o.method,
      variogram: o.variogram,
      isogradDipDeg: o.isogradDipDeg,
      faultDistanceKm: o.faultDistanceKm,
      model: inputs.model,
      heatFlowMWm2: o.heatFlow,
      paleo: { densityKgM3: o.density },
    }),
  );
  const rep = layer.report;
  warnings.push(...rep.warnings);
  const files: string[] = [];
  const hashes = inputs.hashes;
  if (v.out !== undefined) {
    const provenance = { ...layer.lines.provenance, inputs: hashes, faultDistanceKm: o.faultDistanceKm, densityKgM3: o.density, createdBy: 'isograds' };
    await writeFile(v.out, JSON.stringify({ ...layer.lines, provenance }) + '\n');
    files.push(v.out);
  }
  const result = {
    isograds: rep.isograds,
    faults: rep.faults,
    samples: rep.samples,
    misfits: rep.misfits.map((m) => ({ ...m, distanceKm: r3(m.distanceKm) })),
    paleoGradients: rep.paleoGradients.map((p) => ({
      ...p,
      depthKm: r3(p.depthKm),
      apparentGradientCPerKm: r3(p.apparentGradientCPerKm),
      modelDepthKm: r3(p.modelDepthKm),
      todayDepthKm: r3(p.todayDepthKm),
    })),
    method: rep.method,
    sampleCounts: rep.sampleCounts,
    droppedLoops: rep.droppedLoops,
    inputs: hashes,
    files,
    warnings,
    caution: layer.lines.caution,
  };
  process.stdout.write(v.json ? JSON.stringify(result) + '\n' : summaryText(rep, result.faults, warnings, files, layer.lines.caution));
  return 0;
}
