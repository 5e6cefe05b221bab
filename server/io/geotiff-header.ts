/**
 * The header side of the project's GeoTIFF reader (server/io/geotiff.ts): opening an in-memory TIFF without decoding
 * its pixels, its tags, georeferencing and EPSG GeoKeys. The reader and the terrain upload's checks both use these.
 */
import { fromArrayBuffer } from 'geotiff';

type Image = Awaited<ReturnType<Awaited<ReturnType<typeof fromArrayBuffer>>['getImage']>>;
interface Dir {
  loadValue?: (k: string) => Promise<unknown>;
  hasTag?: (k: string) => boolean;
}

/** A decoded TIFF image (geotiff.js), as the header checks read it. */
export type GeoTiffImage = Image;

/** The first image of an in-memory TIFF, nothing of its pixels decoded; throws what geotiff.js throws. */
export async function firstImage(buffer: ArrayBuffer | Uint8Array): Promise<Image> {
  const ab = buffer instanceof Uint8Array ? (buffer.buffer.slice(buffer.byteOffset, buffer.byteOffset + buffer.byteLength) as ArrayBuffer) : buffer;
  return (await fromArrayBuffer(ab)).getImage(0);
}

/** Whether the image's directory has a TIFF tag. */
export function hasTag(image: Image, tag: string): boolean {
  const dir = image.fileDirectory as unknown as Dir;
  return typeof dir.hasTag !== 'function' || dir.hasTag(tag);
}

/** A TIFF tag's value (undefined where the directory cannot give it). */
export async function tagValue(image: Image, tag: string): Promise<unknown> {
  const dir = image.fileDirectory as unknown as Dir;
  return typeof dir.loadValue === 'function' ? dir.loadValue(tag) : undefined;
}

/** Origin and cell size from the tie point and pixel scale (or transformation); null when the image has neither. */
export function georeferencing(image: Image): { origin: number[]; resolution: number[] } | null {
  try {
    return { origin: image.getOrigin(), resolution: image.getResolution() };
  } catch {
    return null;
  }
}

/**
 * The EPSG code of the image's GeoKeys (ProjectedCSTypeGeoKey, else GeographicTypeGeoKey) and whether it is a
 * projected one; null without a code or with a user-defined one (32767).
 */
export function epsgOf(image: Image): { code: number; projected: boolean } | null {
  const keys = (image.getGeoKeys() ?? {}) as Record<string, unknown>;
  const code = keys.ProjectedCSTypeGeoKey ?? keys.GeographicTypeGeoKey;
  if (typeof code !== 'number' || code === 32767) return null;
  return { code, projected: keys.ProjectedCSTypeGeoKey !== undefined };
}
