import { createHash } from 'node:crypto';
import { readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { basename, dirname } from 'node:path';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { parseFeatureCollection } from '../../shared/schema/features.ts';
import { parseThermalModel } from '../../shared/schema/model.ts';
import { compileModel, isUncertainModel, nominalModel } from '../../shared/thermal/index.ts';
import { TOOL_NAME, VERSION } from '../../shared/version.ts';
import { analyzeWells, wellCorrectionReports } from '../../shared/wells/analyze-all.ts';
import type { WellAnalysisOptions, WellReport } from '../../shared/wells/analyze.ts';
import { readWells, type WellInput } from '../../shared/wells/checks.ts';
import { DEFAULT_SD_C, HORNER_DEPTH_TOLERANCE_M } from '../../shared/wells/correction.ts';
import { attachIntervals, parseIntervalsCsv } from '../../shared/wells/intervals-csv.ts';
import { wellModelFromCompiled } from '../../shared/wells/model-adapter.ts';
import type { BhtCorrection } from '../../shared/wells/types.ts';
import { numberListOption, numberOption, parseVerbArgs, textOptions } from './args.ts';
import { CORRECTION_HELP, CORRECTION_OPTIONS, correctionOptions } from './heat-flow-options.ts';
import { correctionTable } from '../../shared/heatflow/sites.ts';
import { EMPIRICAL_BHT } from '../../shared/heatflow/bht-empirical.ts';
import { readDatasetFile } from '../io/vector-input.ts';

const HELP = `subtherm wells: well temperatures → corrected temperatures, gradients and heat-flow sites

  --wells W.geojson|W.csv   wells (GeoJSON Points with measurements, or CSV with one row per measurement and an id;
                            also a GeoPackage .gpkg or a zipped Shapefile .zip of points)
  --points-crs EPSG:nnnn    CRS of a CSV's x,y (easting,northing) columns
  --layer NAME              the layer of a GeoPackage or zipped Shapefile holding several
  --model M.json            thermal model: surface temperature, conductivity of its layers, model check
  --surface-temp-c T        mean surface temperature (°C); overrides the model's; anchors the fits
  --no-anchor               fit without the surface-temperature anchor
  --anchor-sd-c S           σ of the anchor (°C, default 2)
  --correction C            BHTs without a Horner set: none (default) | offset:C (°C) | poly:a0,a1,a2
                            (ΔT °C = a0 + a1·z + a2·z², z in km below ground) | harrison1983 (by depth,
                            Harrison et al. 1983) | waples2004 (by hours since circulation and depth, Waples,
                            Pacheco & Vera 2004; needs hoursSinceCirculation and a surface temperature)
  --correction-source TEXT  where the offset or polynomial comes from (required with poly)
  --correction-sd-c S       σ of a corrected BHT (°C; default ${DEFAULT_SD_C.bhtOffset} with a correction, ${DEFAULT_SD_C.bhtNone} without)
  --horner-tolerance-m M    BHTs within M m count as one depth for Horner (default ${HORNER_DEPTH_TOLERANCE_M})
  --conductivity-wmk K      one conductivity (W/m/K) for wells with no column (instead of the model's layers)
  --intervals I.csv         depth intervals per well: id,topM,bottomM,conductivityWmK and/or lithology
  --lithology-k MAP         conductivity of each lithology, e.g. shale=1.4,sandstone=2.8 (W/m/K)
  --heat-flow Q             heat flow (mW/m²) of the model check (default: the model's surfaceHeatFlowMWm2)
  --outliers flag|exclude   keep flagged outliers in the fit (default) or refit without them
${CORRECTION_HELP}  --out S.geojson           write the derived heat-flow sites
  --json                    print one JSON object { sites, wells, files, warnings, provenance }

Each site's heatFlowMWm2 is the surface heat flow q0: the interval heat flow (q at the fit's effective depth) plus
the heat produced above that depth (from the well's heatProductionColumn or the model's layers), or, where the model
also gives the conductivity, q0 fitted directly to the temperatures with the model's k(T) and A(z). The interval
value, the correction and the method are in the site's properties.
`;

function readInput(path: string, what: string): Buffer {
  try {
    return readFileSync(path);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code ?? 'read error';
    throw new InputError(`cannot read the ${what} file ${path} (${code})`, [{ field: what, problem: `cannot read ${path}: ${code}` }], 'bad_file');
  }
}

function parseJsonFile(bytes: Buffer, path: string): unknown {
  try {
    return JSON.parse(bytes.toString('utf8'));
  } catch (e) {
    throw new InputError(`${path}: not valid JSON (${(e as Error).message})`, [{ field: basename(path), problem: 'expected JSON' }], 'bad_json');
  }
}

const sha256 = (b: Buffer) => createHash('sha256').update(b).digest('hex');

/** Parses --correction none | offset:C | poly:a0,a1,... */
function correctionOption(raw: string | undefined, source: string | undefined, sdRaw: string | undefined): BhtCorrection {
  const sdC = sdRaw === undefined ? undefined : numberOption('correction-sd-c', sdRaw);
  if (sdC !== undefined && !(sdC > 0))
    throw new InputError('--correction-sd-c must be > 0 °C', [{ field: 'correction-sd-c', problem: `got ${sdRaw}` }], 'bad_option');
  if (raw === undefined || raw === 'none') return { method: 'none', sdC };
  if (raw === 'harrison1983' || raw === 'waples2004') return { method: raw, sdC };
  const m = /^(offset|poly):(.+)$/.exec(raw);
  if (!m)
    throw new InputError(
      `--correction must be none, offset:C, poly:a0,a1,a2, harrison1983 or waples2004, got "${raw}"`,
      [{ field: 'correction', problem: `got "${raw}"` }],
      'bad_option',
    );
  if (m[1] === 'offset') return { method: 'offset', offsetC: numberOption('correction', m[2]), sdC, source };
  const coefficients = numberListOption('correction', m[2], []);
  if (coefficients.length > 6)
    throw new InputError('--correction poly takes at most 6 coefficients', [{ field: 'correction', problem: `got ${coefficients.length}` }], 'bad_option');
  if (source === undefined || source.trim() === '') {
    throw new InputError(
      '--correction poly needs --correction-source naming where the coefficients come from',
      [{ field: 'correction-source', problem: 'missing' }],
      'bad_option',
    );
  }
  return { method: 'poly', coefficients, source, sdC };
}

/** Parses --lithology-k name=k,name=k. */
function lithologyOption(raw: string | undefined): Record<string, number> | undefined {
  if (raw === undefined) return undefined;
  const out: Record<string, number> = {};
  for (const part of raw
    .split(',')
    .map((s) => s.trim())
    .filter(Boolean)) {
    const eq = part.lastIndexOf('=');
    const name = part.slice(0, eq).trim();
    const k = Number(part.slice(eq + 1));
    if (eq <= 0 || name === '' || !(k > 0) || !Number.isFinite(k)) {
      throw new InputError(
        `--lithology-k: expected name=conductivity (W/m/K, > 0), got "${part}"`,
        [{ field: 'lithology-k', problem: `got "${part}"` }],
        'bad_option',
      );
    }
    out[name] = k;
  }
  return out;
}

const fmt = (v: number | undefined, d: number) => (v === undefined || !Number.isFinite(v) ? '—' : v.toFixed(d));

function table(reports: WellReport[]): string {
  const head = ['well', 'status', 'method', 'n', 'gradient °C/km', 'k W/m/K', 'heat flow mW/m²', 'quality', 'model RMS °C (check / own q)', 'flags'];
  const rows = reports.map((r) => {
    const w = r.row;
    return [
      w.id,
      w.status,
      w.method,
      String(w.nPoints),
      w.gradientCPerKm === undefined ? '—' : `${fmt(w.gradientCPerKm, 2)} ± ${fmt(w.gradientSeCPerKm, 2)}`,
      fmt(w.conductivityWmK, 2),
      w.heatFlowMWm2 === undefined ? '—' : `${fmt(w.heatFlowMWm2, 1)} ± ${fmt(w.uncertaintyMWm2, 1)}`,
      w.quality ?? '—',
      r.modelCheck ? `${fmt(r.modelCheck.regional?.rmsC, 2)} / ${fmt(r.modelCheck.own?.rmsC, 2)}` : '—',
      w.flags.join(',') || '—',
    ];
  });
  const widths = head.map((h, c) => Math.max(h.length, ...rows.map((r) => r[c].length)));
  const line = (r: string[]) =>
    r
      .map((v, c) => v.padEnd(widths[c]))
      .join('  ')
      .trimEnd();
  return [line(head), line(widths.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n');
}

/** `subtherm wells`: well temperatures to heat-flow sites (see HELP). */
export async function wells(argv: string[]): Promise<number> {
  const { values: o } = parseVerbArgs('wells', argv, {
    ...textOptions('wells points-crs layer model surface-temp-c anchor-sd-c correction correction-source correction-sd-c horner-tolerance-m'),
    ...textOptions('conductivity-wmk intervals lithology-k heat-flow outliers out'),
    'no-anchor': { type: 'boolean', default: false },
    ...CORRECTION_OPTIONS,
  });
  if (o.help) {
    process.stdout.write(HELP);
    return 0;
  }
  if (o.wells === undefined) throw new InputError('wells: --wells is required', [{ field: 'wells', problem: 'missing' }], 'bad_option');
  const warnings: string[] = [];
  const inputs: InputRecord[] = [];
  const wellInputs = await readWellInputs(o.wells, o, inputs, warnings);
  const { opts, modelLabel } = analysisOptions(o, inputs, warnings);
  opts.heatFlowCorrections = await correctionOptions(o);
  if (opts.heatFlowCorrections?.topography && o.terrain !== undefined) {
    const b = readInput(o.terrain, 'terrain');
    inputs.push({ role: 'terrain', file: basename(o.terrain), sha256: sha256(b) });
  }
  if (opts.bht?.method === 'waples2004' && opts.surfaceTemperatureC === undefined)
    warnings.push('--correction waples2004 needs a surface temperature (--surface-temp-c or a model); BHTs stay uncorrected');
  const result = analyzeWells(wellInputs, opts);
  warnings.push(...result.warnings);
  const provenance = {
    tool: TOOL_NAME,
    version: VERSION,
    method: methodText(opts),
    model: modelLabel,
    inputs,
  };
  const files: string[] = [];
  if (o.out !== undefined) {
    const collection = { type: 'FeatureCollection' as const, caution: CAUTION, provenance, features: result.sites.features };
    // The derived sites must be valid sites input for the interpolation engine.
    if (collection.features.length > 0) parseFeatureCollection('sites', collection);
    mkdirSync(dirname(o.out), { recursive: true });
    writeFileSync(o.out, JSON.stringify(collection, null, 1) + '\n');
    files.push(o.out);
  }
  printResult(result, opts.heatFlowCorrections !== undefined, files, warnings, provenance, o.json);
  return 0;
}

/** One input file of the run, by role, with its SHA-256 (for the provenance). */
interface InputRecord {
  role: string;
  file: string;
  sha256: string;
}

/** The options of the verb that shape the analysis (strings as typed). */
interface WellsArgs {
  layer?: string;
  'points-crs'?: string;
  intervals?: string;
  model?: string;
  'surface-temp-c'?: string;
  'no-anchor'?: boolean;
  'anchor-sd-c'?: string;
  correction?: string;
  'correction-source'?: string;
  'correction-sd-c'?: string;
  'horner-tolerance-m'?: string;
  'conductivity-wmk'?: string;
  'lithology-k'?: string;
  'heat-flow'?: string;
  outliers?: string;
}

/** The wells (checked by readWells, errors naming the file) with the interval columns of --intervals attached. */
async function readWellInputs(file: string, o: WellsArgs, inputs: InputRecord[], warnings: string[]): Promise<WellInput[]> {
  const wellBytes = readInput(file, 'wells');
  inputs.push({ role: 'wells', file: basename(file), sha256: sha256(wellBytes) });
  const parsed = await readDatasetFile(file, wellBytes, 'wells', { layer: o.layer, crs: o['points-crs'] });
  warnings.push(...parsed.warnings);
  let wellInputs: WellInput[];
  try {
    wellInputs = readWells(parsed.collection.features);
  } catch (e) {
    if (e instanceof InputError) throw new InputError(`${file}: ${e.message}`, e.details, e.code);
    throw e;
  }
  if (o.intervals !== undefined) {
    const b = readInput(o.intervals, 'intervals');
    inputs.push({ role: 'intervals', file: basename(o.intervals), sha256: sha256(b) });
    attachIntervals(wellInputs, parseIntervalsCsv(b.toString('utf8'), o.intervals), o.intervals);
  }
  return wellInputs;
}

/** A number option that must satisfy `ok`, else an InputError naming the option and the limit. */
function checkedNumber(name: string, raw: string, ok: (v: number) => boolean, limit: string): number {
  const v = numberOption(name, raw);
  if (!ok(v)) throw new InputError(`--${name} must be ${limit}`, [{ field: name, problem: `got ${raw}` }], 'bad_option');
  return v;
}

/** The analysis options from the verb's options and the model file; warnings for combinations that do less than asked. */
function analysisOptions(o: WellsArgs, inputs: InputRecord[], warnings: string[]): { opts: WellAnalysisOptions; modelLabel: string | null } {
  const opts: WellAnalysisOptions = {};
  let modelLabel: string | null = null;
  const surfaceOverride = o['surface-temp-c'] === undefined ? undefined : numberOption('surface-temp-c', o['surface-temp-c']);
  if (o.model !== undefined) {
    const b = readInput(o.model, 'model');
    inputs.push({ role: 'model', file: basename(o.model), sha256: sha256(b) });
    const m = parseThermalModel(parseJsonFile(b, o.model), o.model);
    if (isUncertainModel(m)) warnings.push(`${o.model}: the model has distributions; its nominal values are used (means, modes, midpoints)`);
    const cm = compileModel(nominalModel(m));
    warnings.push(...cm.warnings.filter((w) => !w.includes('densityKgM3')));
    opts.model = wellModelFromCompiled(cm, surfaceOverride);
    opts.surfaceTemperatureC = surfaceOverride ?? cm.surfaceTemperatureC;
    modelLabel = basename(o.model);
  } else if (surfaceOverride !== undefined) opts.surfaceTemperatureC = surfaceOverride;
  if (opts.surfaceTemperatureC === undefined && !o['no-anchor'])
    warnings.push('no surface temperature (--surface-temp-c or a model): the fits are not anchored at the surface');
  opts.anchor = !o['no-anchor'];
  if (o['anchor-sd-c'] !== undefined) opts.anchorSdC = checkedNumber('anchor-sd-c', o['anchor-sd-c'], (v) => v > 0, '> 0 °C');
  opts.bht = correctionOption(o.correction, o['correction-source'], o['correction-sd-c']);
  if (o['horner-tolerance-m'] !== undefined) opts.hornerToleranceM = checkedNumber('horner-tolerance-m', o['horner-tolerance-m'], (v) => v >= 0, '≥ 0 m');
  if (o['conductivity-wmk'] !== undefined) {
    opts.conductivityWmK = checkedNumber('conductivity-wmk', o['conductivity-wmk'], (v) => v > 0, '> 0 W/m/K');
    if (opts.model) warnings.push("--conductivity-wmk replaces the model's layers as the conductivity of wells without a column of their own");
  }
  opts.lithologyConductivity = lithologyOption(o['lithology-k']);
  if (o['heat-flow'] !== undefined) {
    opts.checkHeatFlowMWm2 = checkedNumber('heat-flow', o['heat-flow'], (v) => v > 0, '> 0 mW/m²');
    if (!opts.model) warnings.push('--heat-flow is only used for the model check, and no --model was given');
  }
  if (o.outliers !== undefined) {
    if (o.outliers !== 'flag' && o.outliers !== 'exclude')
      throw new InputError(`--outliers must be flag or exclude, got "${o.outliers}"`, [{ field: 'outliers', problem: `got "${o.outliers}"` }], 'bad_option');
    opts.outliers = o.outliers;
  }
  if (opts.model && !Number.isFinite(opts.model.surfaceHeatFlowMWm2) && opts.checkHeatFlowMWm2 === undefined) {
    warnings.push("the model has no surfaceHeatFlowMWm2 and no --heat-flow was given: the model check runs at each well's own heat flow only");
  }
  return { opts, modelLabel };
}

/** The provenance's method: the BHT correction, the gradient fit, the heat-flow method and the corrections asked for. */
function methodText(opts: WellAnalysisOptions): string {
  const c = opts.bht ?? { method: 'none' as const };
  return (
    'BHT: Horner extrapolation for ≥ 3 timed BHTs within ' +
    `${opts.hornerToleranceM ?? HORNER_DEPTH_TOLERANCE_M} m; otherwise ` +
    (c.method === 'none'
      ? 'uncorrected'
      : c.method === 'offset'
        ? `offset ${c.offsetC} °C${c.source ? ` (${c.source})` : ''}`
        : c.method === 'poly'
          ? `polynomial ΔT = Σ aᵢ·zKmⁱ, a = [${c.coefficients.join(', ')}] (${c.source})`
          : EMPIRICAL_BHT[c.method].source) +
    `; gradient: weighted least squares${opts.anchor && opts.surfaceTemperatureC !== undefined ? `, anchored at ${opts.surfaceTemperatureC} °C` : ''}` +
    '; heat flow: Bullard slope where the well has a conductivity column, else gradient × harmonic-mean conductivity' +
    (opts.heatFlowCorrections?.paleoclimate
      ? `; paleoclimatic correction: ΔT·erfc(z/2√(κt)) steps ${JSON.stringify(opts.heatFlowCorrections.paleoclimate.steps)}, κ = ${opts.heatFlowCorrections.paleoclimate.diffusivityM2s} m²/s`
      : '') +
    (opts.heatFlowCorrections?.topography
      ? `; topographic correction: reference plane (Birch 1950), lapse rate ${opts.heatFlowCorrections.topography.lapseRateCPerKm} °C/km`
      : '')
  );
}

/** Prints the result: one JSON object with --json, else the wells table, the corrections table and the warnings. */
function printResult(
  result: ReturnType<typeof analyzeWells>,
  withCorrections: boolean,
  files: string[],
  warnings: string[],
  provenance: object,
  json: boolean,
): void {
  const corrections = withCorrections ? wellCorrectionReports(result.reports) : undefined;
  if (json) {
    process.stdout.write(
      JSON.stringify({
        sites: result.sites.features.length,
        wells: result.reports,
        ...(corrections ? { corrections } : {}),
        files,
        warnings,
        provenance,
        caution: CAUTION,
      }) + '\n',
    );
  } else {
    const lines = [
      table(result.reports),
      ...(corrections ? ['', 'heat-flow corrections:', correctionTable(corrections)] : []),
      '',
      `${result.sites.features.length} heat-flow site${result.sites.features.length === 1 ? '' : 's'} from ${result.reports.length} well${result.reports.length === 1 ? '' : 's'}`,
    ];
    if (files.length > 0) lines.push(`wrote ${files.join(', ')}`);
    if (warnings.length > 0) lines.push('', 'warnings:', ...warnings.map((w) => `  ${w}`));
    lines.push('', CAUTION);
    process.stdout.write(lines.join('\n') + '\n');
  }
}
