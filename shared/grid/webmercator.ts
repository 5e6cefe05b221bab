/**
 * Web Mercator tile arithmetic (EPSG:3857 tiling as MapLibre requests it: z/x/y, y = 0 at the north).
 * Converters are named by direction; longitudes and latitudes in degrees.
 */
export function lngFromTileX(x: number, z: number): number {
  return (x / 2 ** z) * 360 - 180;
}

export function latFromTileY(y: number, z: number): number {
  const n = Math.PI - (2 * Math.PI * y) / 2 ** z;
  return (180 / Math.PI) * Math.atan(Math.sinh(n));
}

export function tileXFromLng(lng: number, z: number): number {
  return ((lng + 180) / 360) * 2 ** z;
}

export function tileYFromLat(lat: number, z: number): number {
  const r = (lat * Math.PI) / 180;
  return ((1 - Math.log(Math.tan(r) + 1 / Math.cos(r)) / Math.PI) / 2) * 2 ** z;
}

/** Whether tile (z, x, y) touches the bbox [west, south, east, north] (degrees). */
export function tileIntersectsBbox(z: number, x: number, y: number, bbox: readonly [number, number, number, number]): boolean {
  const w = lngFromTileX(x, z),
    e = lngFromTileX(x + 1, z);
  const n = latFromTileY(y, z),
    s = latFromTileY(y + 1, z);
  return e > bbox[0] && w < bbox[2] && n > bbox[1] && s < bbox[3];
}
