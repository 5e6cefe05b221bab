/**
 * A done run's stored grids (heat flow and its standard deviation), decoded once and kept in a small cache: a
 * finished run never changes, and the column inspector reads the same grids on every click.
 */
import proj4 from 'proj4';
import type { Grid } from '../../shared/grid/grid.ts';
import { sampleBilinear } from '../../shared/grid/grid.ts';
import { loadCrsDefinition } from '../../shared/interp/projection.ts';
import type { Store } from '../store/types.ts';

export interface RunGrid {
  grid: Grid<Float32Array>;
  /** Grid CRS coordinates of a WGS84 [lon, lat] in degrees. */
  fromLonLat: (lon: number, lat: number) => [number, number];
}

const WGS84 = /^(EPSG:4326|WGS84|CRS:84|OGC:CRS84)$/i;

export class RunGridCache {
  private readonly cache = new Map<string, RunGrid | null>();

  constructor(
    private readonly store: Store,
    private readonly capacity = 16,
  ) {}

  /** The named grid of a run, or null when the run has none. */
  async get(runId: string, name: string): Promise<RunGrid | null> {
    const key = `${runId}\u0000${name}`;
    if (this.cache.has(key)) {
      const hit = this.cache.get(key)!;
      this.cache.delete(key); // re-insert: most recently used last
      this.cache.set(key, hit);
      return hit;
    }
    const stored = await this.store.getRunGrid(runId, name);
    let out: RunGrid | null = null;
    if (stored) {
      // Values live in shared memory, so handing a grid to a worker thread (sections, heat in place) copies nothing.
      const values = new Float32Array(new SharedArrayBuffer(stored.values.byteLength));
      values.set(stored.values);
      out = await runGridOf({ ...stored.meta, values });
    }
    if (out === null) return null; // not cached: the run may still be storing its grids
    this.cache.set(key, out);
    while (this.cache.size > this.capacity) this.cache.delete(this.cache.keys().next().value as string);
    return out;
  }
}

/** A grid with its WGS84 → grid-CRS converter (the CRS definition comes from the offline EPSG index). */
export async function runGridOf(grid: Grid<Float32Array>): Promise<RunGrid> {
  let fromLonLat: RunGrid['fromLonLat'] = (lon, lat) => [lon, lat];
  if (!WGS84.test(grid.crs.trim())) {
    const conv = proj4('EPSG:4326', await loadCrsDefinition(grid.crs));
    fromLonLat = (lon, lat) => conv.forward<[number, number]>([lon, lat]);
  }
  return { grid, fromLonLat };
}

/**
 * Bilinear value of a run grid at WGS84 lon/lat: NaN outside the grid or in an empty cell; in a filled cell beside an
 * empty one, from the filled cells around it (renormalised weights, shared/grid/grid.ts `sampleBilinear`).
 */
export function sampleAtLonLat(g: RunGrid, lon: number, lat: number): number {
  const [x, y] = g.fromLonLat(lon, lat);
  return sampleBilinear(g.grid, x, y, true);
}
