/**
 * A project data set of kind `grid`: a single-band GeoTIFF covariate (e.g. sediment thickness or basement age) that a
 * run names as its external drift (`interpolation.trend` = `drift:<datasetId>`). The upload is checked before any
 * pixel is decoded (size limit 413, TIFF signature 415, a readable georeferenced header with one band, pixel count and
 * pixel blocks inside the file 422: server/terrain-upload.ts `checkDemHeader`), then decoded once with the project's
 * GeoTIFF reader to reject a grid without values; the store keeps the file's bytes (base64) so that a run reads
 * exactly what the command line reads from the same file.
 */
import { Buffer } from 'node:buffer';
import { InputError } from '../../shared/errors.ts';
import { gridBbox } from '../../shared/grid/grid.ts';
import { converter, loadCrsDefinition, WGS84_DEF } from '../../shared/interp/projection.ts';
import type { ExternalDriftGrid } from '../../shared/interp/externalDrift.ts';
import { checkDemHeader, type RasterUpload } from '../terrain-upload.ts';
import { sha256Hex } from './export.ts';
import { readGeoTiff } from './geotiff.ts';
import { utf8, type ParsedUpload } from './dataset-upload.ts';

/** How the shared header checks name a grid upload in their messages (413 code: too_large). */
const GRID_UPLOAD: RasterUpload = { noun: 'the grid', kind: 'a grid data set', band: 'the covariate', tooLargeCode: 'too_large' };

/** Checks and decodes a grid upload; the stored body is the file's bytes in base64 (as UTF-8). */
export async function gridDatasetFromUpload(bytes: Uint8Array, maxBytes: number, source: string): Promise<ParsedUpload> {
  const h = await checkDemHeader(bytes, maxBytes, GRID_UPLOAD);
  const { grid } = await readGeoTiff(bytes, { source });
  let finite = 0;
  for (let i = 0; i < grid.values.length; i++) if (Number.isFinite(grid.values[i])) finite++;
  if (finite === 0) throw new InputError('the grid has no values (every pixel is NoData)', [{ field: '(body)', problem: 'at least one value' }], 'bad_geotiff');
  const [w, s, e, n] = gridBbox(grid);
  let bbox: [number, number, number, number] = [w, s, e, n];
  if (h.crs !== 'EPSG:4326') {
    const c = converter(await loadCrsDefinition(h.crs), WGS84_DEF);
    const corners = [
      [w, s],
      [w, n],
      [e, s],
      [e, n],
    ].map((p) => c.forward([p[0], p[1]]));
    bbox = [
      Math.min(...corners.map((p) => p[0])),
      Math.min(...corners.map((p) => p[1])),
      Math.max(...corners.map((p) => p[0])),
      Math.max(...corners.map((p) => p[1])),
    ];
  }
  const body = utf8(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength).toString('base64'));
  return { kind: 'grid', body, featureCount: finite, warnings: [], suggestedName: null, contentHash: sha256Hex(body), bbox };
}

/** The bytes of a stored grid data set (its GeoTIFF file). */
export function gridDatasetBytes(body: string): Uint8Array<ArrayBuffer> {
  return new Uint8Array(Buffer.from(body, 'base64'));
}

/** A GeoTIFF file's bytes as the covariate of an external drift, named `name` in reports (the CLI's and a run's path). */
export async function driftGridFromBytes(bytes: Uint8Array, name: string): Promise<ExternalDriftGrid> {
  const r = await readGeoTiff(bytes, { source: name, chooseBand: true });
  return { name, grid: r.grid, crsDef: await loadCrsDefinition(r.grid.crs) };
}
