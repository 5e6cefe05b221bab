/**
 * The realizations file written by `simulate --keep-realizations` and read by `isotherms --realizations-from`: every
 * simulated field on the grid, so later products (isotherm depths, heat in place) can use the same fields.
 *
 * Format (three files side by side, `<field>.realizations.*`):
 * - `.f32`: the values, IEEE 754 binary32 little-endian, realization-major: realization r (0-based), row i (north
 *   row first), column j (west first) at byte offset 4·(r·width·height + i·width + j); NaN = no data.
 * - `.json`: the header: `{ format: "subtherm-realizations", version: 1, field, units, realizations, width, height,
 *   west, north, dx, dy, crs, sampleType: "float32", byteOrder: "little-endian", layout, nodata: "NaN", dataFile,
 *   dataSha256, seed, provenance, caution }`; west/north are the outer corner of the upper-left cell, dx/dy the cell
 *   sizes in CRS units (as the project's GeoTIFFs).
 * - `.vrt`: a GDAL virtual raster (GDAL's open VRT format, VRTRawRasterBand) over the `.f32`, one band per
 *   realization, so `gdalinfo`, `gdal_translate` and QGIS open the stack as a multi-band raster.
 */
import { createHash } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import { gridSpecOf, type GridSpec } from '../../shared/grid/grid.ts';

export const REALIZATIONS_FORMAT = 'subtherm-realizations';

/** The grid's georeferencing (GridSpec: width, height, west, north, dx, dy, crs) and the stack's description. */
export interface RealizationsHeader extends GridSpec {
  format: typeof REALIZATIONS_FORMAT;
  version: 1;
  field: string;
  units: string;
  realizations: number;
  sampleType: 'float32';
  byteOrder: 'little-endian';
  layout: string;
  nodata: 'NaN';
  /** The data file's name, relative to the header. */
  dataFile: string;
  dataSha256: string;
  seed: number;
  provenance: Record<string, unknown>;
  caution: string;
}

const LAYOUT = 'realization-major; within a realization rows north to south, columns west to east';

/** The three files' contents for realization-major Float32 `values` on `grid` (names from `field`). */
export function realizationsFiles(
  field: string,
  units: string,
  grid: GridSpec,
  values: Float32Array,
  realizations: number,
  seed: number,
  provenance: Record<string, unknown>,
): { name: string; bytes: Uint8Array }[] {
  const cells = grid.width * grid.height;
  if (values.length !== realizations * cells) throw new RangeError(`${values.length} values for ${realizations} realizations × ${cells} cells`);
  const data = new Uint8Array(values.buffer, values.byteOffset, values.byteLength);
  // Float32Array is in the platform's byte order; Node runs little-endian on every supported platform.
  if (new Uint8Array(Float32Array.of(1).buffer)[3] !== 0x3f) throw new RangeError('a big-endian platform cannot write the realizations file');
  const dataFile = `${field}.realizations.f32`;
  const header: RealizationsHeader = {
    format: REALIZATIONS_FORMAT,
    version: 1,
    field,
    units,
    realizations,
    ...gridSpecOf(grid),
    sampleType: 'float32',
    byteOrder: 'little-endian',
    layout: LAYOUT,
    nodata: 'NaN',
    dataFile,
    dataSha256: createHash('sha256').update(data).digest('hex'),
    seed,
    provenance,
    caution: CAUTION,
  };
  const bands: string[] = [];
  for (let r = 0; r < realizations; r++)
    bands.push(
      `  <VRTRasterBand dataType="Float32" band="${r + 1}" subClass="VRTRawRasterBand">\n` +
        `    <Description>realization ${r}</Description>\n` +
        `    <SourceFilename relativeToVRT="1">${dataFile}</SourceFilename>\n` +
        `    <ImageOffset>${4 * r * cells}</ImageOffset>\n    <PixelOffset>4</PixelOffset>\n    <LineOffset>${4 * grid.width}</LineOffset>\n` +
        `    <ByteOrder>LSB</ByteOrder>\n  </VRTRasterBand>`,
    );
  const vrt =
    `<VRTDataset rasterXSize="${grid.width}" rasterYSize="${grid.height}">\n` +
    `  <SRS>${grid.crs}</SRS>\n` +
    `  <GeoTransform>${grid.west}, ${grid.dx}, 0, ${grid.north}, 0, ${-grid.dy}</GeoTransform>\n` +
    `${bands.join('\n')}\n</VRTDataset>\n`;
  const enc = new TextEncoder();
  return [
    { name: dataFile, bytes: data },
    { name: `${field}.realizations.json`, bytes: enc.encode(JSON.stringify(header, null, 1) + '\n') },
    { name: `${field}.realizations.vrt`, bytes: enc.encode(vrt) },
  ];
}

const bad = (path: string, problem: string) =>
  new InputError(`${path}: not a realizations file: ${problem}`, [{ feature: path, field: 'realizations-from', problem }], 'bad_realizations_file');

/** Reads a realizations file by its header (`<field>.realizations.json`): the header and the values (checked). */
export async function readRealizationsFile(headerPath: string): Promise<{ header: RealizationsHeader; values: Float32Array }> {
  let text: string;
  try {
    text = await readFile(headerPath, 'utf8');
  } catch (e) {
    throw new InputError(
      `cannot read realizations file ${headerPath}`,
      [{ field: 'realizations-from', problem: (e as NodeJS.ErrnoException).code ?? String(e) }],
      'file_not_found',
    );
  }
  let h: RealizationsHeader;
  try {
    h = JSON.parse(text) as RealizationsHeader;
  } catch {
    throw bad(headerPath, 'the header is not JSON (give the .json file written by simulate --keep-realizations)');
  }
  if (h === null || typeof h !== 'object' || h.format !== REALIZATIONS_FORMAT) throw bad(headerPath, `expected "format": "${REALIZATIONS_FORMAT}"`);
  if (h.version !== 1) throw bad(headerPath, `version ${String(h.version)} is not known (expected 1)`);
  for (const k of ['realizations', 'width', 'height'] as const)
    if (!(Number.isInteger(h[k]) && h[k] >= 1)) throw bad(headerPath, `"${k}" must be a positive integer`);
  for (const k of ['west', 'north', 'dx', 'dy'] as const) if (!Number.isFinite(h[k])) throw bad(headerPath, `"${k}" must be a number`);
  if (h.sampleType !== 'float32' || h.byteOrder !== 'little-endian') throw bad(headerPath, 'expected float32 little-endian samples');
  if (typeof h.dataFile !== 'string' || basename(h.dataFile) !== h.dataFile) throw bad(headerPath, '"dataFile" must be a file name beside the header');
  const dataPath = join(dirname(headerPath), h.dataFile);
  let buf: Buffer;
  try {
    buf = await readFile(dataPath);
  } catch (e) {
    throw new InputError(
      `cannot read the realizations data ${dataPath}`,
      [{ field: 'realizations-from', problem: (e as NodeJS.ErrnoException).code ?? String(e) }],
      'file_not_found',
    );
  }
  const want = 4 * h.realizations * h.width * h.height;
  if (buf.byteLength !== want) throw bad(dataPath, `${buf.byteLength} bytes, expected ${want} (${h.realizations} × ${h.width} × ${h.height} float32)`);
  if (typeof h.dataSha256 === 'string' && createHash('sha256').update(buf).digest('hex') !== h.dataSha256)
    throw bad(dataPath, 'its SHA-256 differs from the header (the file changed after it was written)');
  const values = new Float32Array(h.realizations * h.width * h.height);
  new Uint8Array(values.buffer).set(buf);
  return { header: h, values };
}
