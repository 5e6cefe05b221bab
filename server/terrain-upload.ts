/**
 * A project's terrain: a DEM GeoTIFF (EPSG:4326, or a projected CRS with an EPSG code) checked before any pixel is
 * decoded, decoded with the project's one GeoTIFF reader (server/io/geotiff.ts), reprojected to a lon/lat grid
 * (bilinear, NaN outside the source) and stored for raster-dem tiles. Checks, in order: size limit (413), TIFF
 * signature (415), a readable header with georeferencing and one band (422), pixel count (413), and that the strips
 * or tiles it claims lie inside the file and, uncompressed, hold every pixel the header claims (422).
 */
import { InputError } from '../shared/errors.ts';
import type { Grid } from '../shared/grid/grid.ts';
import { converter, kmPerDegree, loadCrsDefinition, metresPerUnit, WGS84_DEF } from '../shared/interp/projection.ts';
import { readGeoTiff } from './io/geotiff.ts';
import { epsgOf, firstImage, georeferencing, hasTag, tagValue, type GeoTiffImage } from './io/geotiff-header.ts';

/** Most cells a terrain may have (source or reprojected): 40 million (160 MB of Float32). */
export const MAX_TERRAIN_CELLS = 40_000_000;

const bad = (message: string, problem: string, code = 'bad_geotiff') => new InputError(message, [{ field: '(body)', problem }], code);

/** How the messages of checkDemHeader name the upload: a project's terrain or a grid data set share the checks. */
export interface RasterUpload {
  /** The upload in a sentence: "the terrain", "the grid". */
  noun: string;
  /** The kind of file in general ("a DEM") and what its one band holds. */
  kind: string;
  band: string;
  /** The error code (413) of an upload over the byte or pixel limit. */
  tooLargeCode: string;
}
export const TERRAIN_UPLOAD: RasterUpload = { noun: 'the terrain', kind: 'a DEM', band: 'elevation in metres', tooLargeCode: 'terrain_too_large' };

/** The header facts a DEM upload is checked on (nothing of the pixels is decoded). */
export interface DemHeader {
  width: number;
  height: number;
  crs: string;
}

/** Checks a DEM (or grid) upload before decoding; throws InputError (413/415/422) naming what is wrong and the upload. */
export async function checkDemHeader(bytes: Uint8Array, maxBytes: number, up: RasterUpload): Promise<DemHeader> {
  if (bytes.byteLength > maxBytes) {
    throw bad(
      `${up.noun} is ${bytes.byteLength} bytes, over the limit of ${maxBytes} bytes (${(maxBytes / 1048576).toFixed(0)} MB)`,
      `at most ${maxBytes} bytes (SUBTHERM_MAX_TERRAIN_BYTES)`,
      up.tooLargeCode,
    );
  }
  const sig = bytes.byteLength >= 4 ? (bytes[0] << 24) | (bytes[1] << 16) | (bytes[2] << 8) | bytes[3] : 0;
  // TIFF (TIFF 6.0 §2: "II*\0" or "MM\0*") and BigTIFF ("II+\0", "MM\0+").
  if (![0x49492a00, 0x4d4d002a, 0x49492b00, 0x4d4d002b].includes(sig >>> 0)) {
    throw bad(`${up.noun} is not a GeoTIFF: a TIFF file starts with II*\\0 or MM\\0*`, 'expected a GeoTIFF (image/tiff)', 'not_geotiff');
  }
  let image;
  try {
    image = await firstImage(bytes);
  } catch (e) {
    throw bad(`${up.noun} GeoTIFF's header cannot be read: ${e instanceof Error ? e.message : String(e)}`, 'a readable TIFF header');
  }
  const width = image.getWidth(),
    height = image.getHeight();
  if (!(width >= 2 && height >= 2)) throw bad(`${up.noun} has ${width} × ${height} pixels; ${up.kind} needs at least 2 × 2`, 'at least 2 × 2 pixels');
  if (width * height > MAX_TERRAIN_CELLS) {
    throw bad(
      `${up.noun} claims ${width} × ${height} = ${(width * height).toLocaleString('en')} pixels, over the limit of ${MAX_TERRAIN_CELLS.toLocaleString('en')}`,
      `at most ${MAX_TERRAIN_CELLS} pixels`,
      up.tooLargeCode,
    );
  }
  const spp = image.getSamplesPerPixel();
  if (spp !== 1) throw bad(`${up.noun} has ${spp} bands; ${up.kind} has one (${up.band})`, 'one band');
  await checkPixelBlocks(image, bytes, up);
  return { width, height, crs: await demCrs(image, up) };
}

/**
 * The strips or tiles a DEM's header claims: as many as its size needs, each inside the file, and (uncompressed)
 * holding every pixel (422 truncated_geotiff otherwise).
 */
async function checkPixelBlocks(image: GeoTiffImage, bytes: Uint8Array, up: RasterUpload): Promise<void> {
  const width = image.getWidth(),
    height = image.getHeight();
  const tiled = hasTag(image, 'TileOffsets');
  const offsets = (await tagValue(image, tiled ? 'TileOffsets' : 'StripOffsets')) as ArrayLike<number> | undefined;
  const counts = (await tagValue(image, tiled ? 'TileByteCounts' : 'StripByteCounts')) as ArrayLike<number> | undefined;
  if (!offsets || !counts || offsets.length !== counts.length)
    throw bad(`${up.noun} GeoTIFF has no pixel data directory (strip or tile offsets and byte counts)`, 'strip or tile offsets and byte counts');
  let expectedBlocks: number;
  let rowsPerBlock: number,
    blockWidth = width;
  if (tiled) {
    const tw = Number(await tagValue(image, 'TileWidth')),
      th = Number(await tagValue(image, 'TileLength'));
    expectedBlocks = Math.ceil(width / tw) * Math.ceil(height / th);
    rowsPerBlock = th;
    blockWidth = tw;
  } else {
    const rps = hasTag(image, 'RowsPerStrip') ? Number(await tagValue(image, 'RowsPerStrip')) : height;
    rowsPerBlock = Math.min(height, rps > 0 ? rps : height);
    expectedBlocks = Math.ceil(height / rowsPerBlock);
  }
  if (offsets.length < expectedBlocks) {
    throw bad(
      `${up.noun} claims ${width} × ${height} pixels but has ${offsets.length} of the ${expectedBlocks} ${tiled ? 'tiles' : 'strips'} they need`,
      `${expectedBlocks} ${tiled ? 'tiles' : 'strips'}`,
      'truncated_geotiff',
    );
  }
  let held = 0;
  for (let i = 0; i < offsets.length; i++) {
    const end = offsets[i] + counts[i];
    if (!(offsets[i] >= 0 && end <= bytes.byteLength)) {
      throw bad(
        `${up.noun} claims pixel data up to byte ${end}, beyond the end of the file (${bytes.byteLength} bytes): the file is truncated or its header is wrong`,
        `${tiled ? 'tile' : 'strip'} ${i} ends past the end of the file`,
        'truncated_geotiff',
      );
    }
    held += counts[i];
  }
  const compression = hasTag(image, 'Compression') ? Number(await tagValue(image, 'Compression')) : 1;
  if (compression === 1) {
    const need = tiled ? expectedBlocks * blockWidth * rowsPerBlock * image.getBytesPerPixel() : width * height * image.getBytesPerPixel();
    if (held < need) {
      throw bad(
        `${up.noun} claims ${width} × ${height} pixels (${need} bytes uncompressed) but holds ${held} bytes of pixel data`,
        `${need} bytes of pixels`,
        'truncated_geotiff',
      );
    }
  }
}

/** The DEM's CRS as EPSG:nnnn: georeferenced, EPSG:4326 or a projected code with an offline definition (422). */
async function demCrs(image: GeoTiffImage, up: RasterUpload): Promise<string> {
  if (georeferencing(image) === null) throw bad(`${up.noun} has no georeferencing`, 'a tie point and pixel scale (or a transformation)');
  const epsg = epsgOf(image);
  if (epsg === null) throw bad(`${up.noun} has no EPSG coordinate system`, 'EPSG:4326 or a projected CRS with an EPSG code (ProjectedCSTypeGeoKey)', 'bad_crs');
  const code = epsg.code;
  if (!epsg.projected && code !== 4326)
    throw bad(`${up.noun} is in geographic EPSG:${code}; use EPSG:4326 (WGS84) or a projected CRS`, 'EPSG:4326 or a projected EPSG code', 'bad_crs');
  const crs = `EPSG:${code}`;
  await loadCrsDefinition(crs).catch((e: unknown) => {
    // A CRS that needs a datum grid file keeps its own answer (what to give instead); any other refusal means the
    // code has no offline definition.
    if (e instanceof InputError && e.code === 'crs_needs_datum_grid') throw bad(`${up.noun}'s CRS: ${e.message}`, e.details[0]?.problem ?? e.message, e.code);
    throw bad(`${up.noun}'s CRS ${crs} is not in the offline CRS list`, e instanceof Error ? e.message : String(e), 'bad_crs');
  });
  return crs;
}

/** Bilinear sample of a grid at fractional column/row (cell centres at integers); NaN outside or beside no data. */
function bilinear(g: Grid<Float32Array>, fc: number, fr: number): number {
  if (!(fc >= -0.5 && fr >= -0.5 && fc <= g.width - 0.5 && fr <= g.height - 0.5)) return NaN;
  const c = Math.min(g.width - 1, Math.max(0, fc)),
    r = Math.min(g.height - 1, Math.max(0, fr));
  const c0 = Math.min(g.width - 2, Math.floor(c)),
    r0 = Math.min(g.height - 2, Math.floor(r));
  const tx = c - c0,
    ty = r - r0,
    v = g.values,
    w = g.width;
  const a = v[r0 * w + c0],
    b = v[r0 * w + c0 + 1],
    d = v[(r0 + 1) * w + c0],
    e = v[(r0 + 1) * w + c0 + 1];
  return (a * (1 - tx) + b * tx) * (1 - ty) + (d * (1 - tx) + e * tx) * ty;
}

/**
 * A projected DEM resampled onto a lon/lat grid covering it: cell size the source's at the centre latitude
 * (kmPerDegree), value at each cell centre by inverse projection (proj4) and bilinear interpolation.
 */
export function reprojectToLonLat(src: Grid<Float32Array>, srcDef: string): Grid<Float32Array> {
  const c = converter(WGS84_DEF, srcDef);
  const east = src.west + src.width * src.dx,
    south = src.north - src.height * src.dy;
  let w = Infinity,
    s = Infinity,
    e = -Infinity,
    n = -Infinity;
  const steps = 32;
  for (let i = 0; i <= steps; i++) {
    for (const [x, y] of [
      [src.west + ((east - src.west) * i) / steps, src.north],
      [src.west + ((east - src.west) * i) / steps, south],
      [src.west, south + ((src.north - south) * i) / steps],
      [east, south + ((src.north - south) * i) / steps],
    ] as [number, number][]) {
      const [lon, lat] = c.inverse([x, y]);
      if (Number.isFinite(lon) && Number.isFinite(lat)) {
        w = Math.min(w, lon);
        e = Math.max(e, lon);
        s = Math.min(s, lat);
        n = Math.max(n, lat);
      }
    }
  }
  if (!(e > w && n > s))
    throw new InputError(
      'the terrain cannot be placed on the globe from its CRS',
      [{ field: 'crs', problem: 'its corners do not project to longitude/latitude' }],
      'bad_crs',
    );
  const mpu = metresPerUnit(srcDef);
  const k = kmPerDegree((s + n) / 2);
  const dx = (src.dx * mpu) / 1000 / k.lon,
    dy = (src.dy * mpu) / 1000 / k.lat;
  const width = Math.max(2, Math.ceil((e - w) / dx)),
    height = Math.max(2, Math.ceil((n - s) / dy));
  if (width * height > MAX_TERRAIN_CELLS)
    throw bad(
      `the terrain would need ${width} × ${height} cells in longitude/latitude, over the limit of ${MAX_TERRAIN_CELLS}`,
      `at most ${MAX_TERRAIN_CELLS} cells`,
      'terrain_too_large',
    );
  const values = new Float32Array(width * height);
  for (let r = 0; r < height; r++) {
    const lat = n - (r + 0.5) * dy;
    for (let col = 0; col < width; col++) {
      const [x, y] = c.forward([w + (col + 0.5) * dx, lat]);
      values[r * width + col] = bilinear(src, (x - src.west) / src.dx - 0.5, (src.north - y) / src.dy - 0.5);
    }
  }
  return { width, height, west: w, north: n, dx, dy, crs: 'EPSG:4326', units: 'm', values };
}

/** Checks, decodes and (if projected) reprojects a DEM upload to a lon/lat grid of elevations in metres. */
export async function demFromUpload(bytes: Uint8Array, maxBytes: number): Promise<{ grid: Grid<Float32Array>; sourceCrs: string }> {
  const h = await checkDemHeader(bytes, maxBytes, TERRAIN_UPLOAD);
  const { grid } = await readGeoTiff(bytes, { source: 'the terrain GeoTIFF' });
  let finite = 0;
  for (let i = 0; i < grid.values.length; i++) if (Number.isFinite(grid.values[i])) finite++;
  if (finite === 0) throw bad('the terrain has no elevation values (every pixel is NoData)', 'at least one elevation value');
  if (h.crs === 'EPSG:4326') return { grid: { ...grid, units: 'm' }, sourceCrs: h.crs };
  return { grid: reprojectToLonLat(grid, await loadCrsDefinition(h.crs)), sourceCrs: h.crs };
}
