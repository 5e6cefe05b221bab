// Reference ground cell sizes from geographiclib (geodesics on the WGS84 ellipsoid) and proj4, independent of the
// project's own geodesy (shared/geodesy/).
import proj4 from 'proj4';
import geodesic from 'geographiclib-geodesic';

const WGS84 = '+proj=longlat +datum=WGS84 +no_defs';
const G = geodesic.Geodesic.WGS84;

/**
 * The smallest and largest geographiclib geodesic length (km) of every cell's two sides (between the midpoints of
 * opposite edges, inverse-projected by proj4 from the proj4 definition `def`, or lon/lat degrees when `def` is null)
 * over the whole grid; `west`/`north` are the grid's outer edges.
 */
export function referenceCellSideRangeKm(
  g: { width: number; height: number; west: number; north: number; dx: number; dy: number },
  def: string | null,
): [number, number] {
  const c = def === null ? null : proj4(def, WGS84);
  const ll = (x: number, y: number) => (c === null ? [x, y] : c.forward([x, y]));
  let lo = Infinity,
    hi = -Infinity;
  for (let r = 0; r < g.height; r++)
    for (let k = 0; k < g.width; k++) {
      const x = g.west + (k + 0.5) * g.dx,
        y = g.north - (r + 0.5) * g.dy;
      const [w0, w1] = ll(x - g.dx / 2, y),
        [e0, e1] = ll(x + g.dx / 2, y),
        [s0, s1] = ll(x, y - g.dy / 2),
        [n0, n1] = ll(x, y + g.dy / 2);
      const sx = (G.Inverse(w1, w0, e1, e0).s12 as number) / 1000,
        sy = (G.Inverse(s1, s0, n1, n0).s12 as number) / 1000;
      lo = Math.min(lo, sx, sy);
      hi = Math.max(hi, sx, sy);
    }
  return [lo, hi];
}
