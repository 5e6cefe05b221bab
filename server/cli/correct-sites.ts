import { createHash } from 'node:crypto';
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { basename, dirname } from 'node:path';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { correctSites, correctionTable } from '../../shared/heatflow/sites.ts';
import { correctionMethodText } from '../../shared/heatflow/corrections.ts';
import { TOOL_NAME, VERSION } from '../../shared/version.ts';
import { readDatasetFile } from '../io/vector-input.ts';
import { parseVerbArgs, textOptions } from './args.ts';
import { CORRECTION_HELP, CORRECTION_OPTIONS, correctionOptions } from './heat-flow-options.ts';

const HELP = `subtherm correct-sites: paleoclimatic and topographic corrections of heat-flow sites, with a report

  --sites S.geojson|S.csv   heat-flow sites (also .gpkg or a zipped Shapefile); a site is corrected when it gives
                            intervalTopM and intervalBottomM (m below ground, the depths of its gradient) and
                            gradientCPerKm or conductivityWmK
  --points-crs EPSG:nnnn    CRS of a CSV's x,y (easting,northing) columns
  --layer NAME              the layer of a GeoPackage or zipped Shapefile holding several
${CORRECTION_HELP}  --out S.geojson           write the sites with corrected heatFlowMWm2 (the raw value and each correction in
                            their properties)
  --json                    print one JSON object { reports, files, warnings, provenance }

At least one of --paleoclimate and --terrain is required. Wells are corrected by \`subtherm wells\` with the same options.
`;

/** `subtherm correct-sites` (see HELP). */
export async function correctSitesVerb(argv: string[]): Promise<number> {
  const { values: o } = parseVerbArgs('correct-sites', argv, {
    ...textOptions('sites points-crs layer out'),
    ...CORRECTION_OPTIONS,
  });
  if (o.help) {
    process.stdout.write(HELP);
    return 0;
  }
  if (o.sites === undefined) throw new InputError('correct-sites: --sites is required', [{ field: 'sites', problem: 'missing' }], 'bad_option');
  const opts = await correctionOptions(o);
  if (opts === undefined)
    throw new InputError('correct-sites: give --paleoclimate and/or --terrain', [{ field: 'paleoclimate', problem: 'no correction asked for' }], 'bad_option');
  let bytes: Buffer;
  try {
    bytes = readFileSync(o.sites);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code ?? 'read error';
    throw new InputError(`cannot read the sites file ${o.sites} (${code})`, [{ field: 'sites', problem: `cannot read ${o.sites}: ${code}` }], 'bad_file');
  }
  const parsed = await readDatasetFile(o.sites, bytes, 'sites', { layer: o.layer, crs: o['points-crs'] });
  const warnings = [...parsed.warnings];
  const features = parsed.collection.features as unknown as Parameters<typeof correctSites>[0];
  const { features: out, reports } = correctSites(features, opts);
  for (const r of reports) if (r.status !== 'corrected') warnings.push(`site ${r.id}: not corrected: ${r.reason}`);
  for (const r of reports) for (const n of r.interval?.notes ?? []) warnings.push(`site ${r.id}: ${n}`);
  const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex');
  const inputs = [{ role: 'sites', file: basename(o.sites), sha256: sha(bytes) }];
  if (o.terrain !== undefined) inputs.push({ role: 'terrain', file: basename(o.terrain), sha256: sha(readFileSync(o.terrain)) });
  const provenance = {
    tool: TOOL_NAME,
    version: VERSION,
    method: correctionMethodText(opts),
    inputs,
  };
  const files: string[] = [];
  if (o.out !== undefined) {
    mkdirSync(dirname(o.out), { recursive: true });
    writeFileSync(o.out, JSON.stringify({ type: 'FeatureCollection', caution: CAUTION, provenance, features: out }, null, 1) + '\n');
    files.push(o.out);
  }
  if (o.json) process.stdout.write(JSON.stringify({ reports, files, warnings, provenance, caution: CAUTION }) + '\n');
  else {
    const lines = [correctionTable(reports), '', `${reports.filter((r) => r.status === 'corrected').length} of ${reports.length} sites corrected`];
    if (files.length > 0) lines.push(`wrote ${files.join(', ')}`);
    if (warnings.length > 0) lines.push('', 'warnings:', ...warnings.map((w) => `  ${w}`));
    lines.push('', CAUTION);
    process.stdout.write(lines.join('\n') + '\n');
  }
  return 0;
}
