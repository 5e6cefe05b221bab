/**
 * The XYZ tile routes' common edge: a tile's address parsed from the path ({z}/{x}/{y}.png, integers) and the PNG
 * answered, or a 400 naming the path / a 404 naming the tile. The terrain tiles (the demo's and a project's) and a
 * run layer's tiles all answer through these two.
 */
import type { Context } from 'hono';
import { InputError } from '../../shared/errors.ts';

export interface TileAddress {
  z: number;
  x: number;
  y: number;
}

/** The route's z, x and y parameters as a tile address; `route` is how the error names the route's form. */
export function tileAddress(c: Context, route: string): TileAddress {
  const { z, x, y } = c.req.param();
  const m = /^(\d+)\.png$/.exec(y ?? '');
  if (!m || !/^\d+$/.test(z ?? '') || !/^\d+$/.test(x ?? ''))
    throw new InputError(`${route} is …/{z}/{x}/{y}.png with integer z, x, y`, [{ field: 'path', problem: `got ${z}/${x}/${y}` }], 'bad_tile');
  return { z: Number(z), x: Number(x), y: Number(m[1]) };
}

/**
 * The tile's PNG with its cache policy, or a 404: `what` names the tiles ("terrain tile"), `outside` what a missing
 * tile lies outside of.
 */
export function pngTile(c: Context, png: Uint8Array | null, t: TileAddress, what: string, outside: string, cacheControl: string): Response {
  if (!png) throw new InputError(`no ${what} ${t.z}/${t.x}/${t.y}`, [{ field: 'tile', problem: `outside ${outside}` }], 'tile_not_found');
  return c.body(new Uint8Array(png), 200, { 'content-type': 'image/png', 'cache-control': cacheControl });
}
