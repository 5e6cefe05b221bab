/**
 * Area of a GeoJSON Polygon or MultiPolygon on the WGS84 ellipsoid with geodesic edges (Karney 2013, "Algorithms
 * for geodesics", J. Geodesy 87, via geographiclib-geodesic). Outer rings add, holes subtract, whatever the ring
 * orientation. GeoJSON edges are straight in longitude/latitude (RFC 7946 §3.1.1), not geodesics: for the small
 * polygons of a regional study the difference is far below the uncertainty of any resource estimate.
 */
import geodesic from 'geographiclib-geodesic';

const WGS84 = geodesic.Geodesic.WGS84;

/** Absolute ellipsoidal area (m²) of one closed ring of [lon, lat] positions (degrees); the closing vertex may repeat the first. */
export function ringAreaM2(ring: ArrayLike<ArrayLike<number>>): number {
  const p = WGS84.Polygon(false);
  let n = ring.length;
  if (n > 1 && ring[0][0] === ring[n - 1][0] && ring[0][1] === ring[n - 1][1]) n--;
  if (n < 3) return 0;
  for (let i = 0; i < n; i++) p.AddPoint(ring[i][1], ring[i][0]);
  return Math.abs(p.Compute(false, true).area ?? 0);
}

/** Ellipsoidal area (m²) of a Polygon (rings: outer first, then holes) or MultiPolygon, geodesic edges. */
export function geodesicPolygonAreaM2(
  geometry: { type: 'Polygon'; coordinates: number[][][] } | { type: 'MultiPolygon'; coordinates: number[][][][] },
): number {
  const polys = geometry.type === 'Polygon' ? [geometry.coordinates] : geometry.coordinates;
  let total = 0;
  for (const rings of polys) {
    rings.forEach((ring, i) => {
      const a = ringAreaM2(ring);
      total += i === 0 ? a : -a;
    });
  }
  return total;
}
