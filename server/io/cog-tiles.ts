/**
 * The pixel side of a Cloud-Optimized GeoTIFF (cog.ts): the overview pyramid (halving by 2 × 2 averages or the
 * north-west cell) and the packing of one tile for the floating-point predictor (TIFF Technical Note 3, Predictor 3:
 * each row's floats split into byte planes, most significant first, then byte-wise horizontal differencing).
 */

export const COG_TILE_SIZE = 512;

export interface Level {
  width: number;
  height: number;
  values: Float32Array | Float64Array;
}

/** One overview: half the size (rounded up), by the mean of the data cells of each 2 × 2 block or by its NW cell. */
export function halveGrid(src: Level, resampling: 'average' | 'nearest', out?: Float32Array): Level {
  const w = Math.ceil(src.width / 2),
    h = Math.ceil(src.height / 2);
  const o = out ?? new Float32Array(w * h);
  const v = src.values,
    sw = src.width,
    sh = src.height;
  for (let r = 0; r < h; r++) {
    const r0 = 2 * r,
      r1 = Math.min(sh - 1, r0 + 1);
    for (let c = 0; c < w; c++) {
      const c0 = 2 * c,
        c1 = Math.min(sw - 1, c0 + 1);
      if (resampling === 'nearest') {
        o[r * w + c] = v[r0 * sw + c0];
        continue;
      }
      let s = 0,
        n = 0;
      const a = v[r0 * sw + c0],
        b = v[r0 * sw + c1],
        d = v[r1 * sw + c0],
        e = v[r1 * sw + c1];
      if (a - a === 0) {
        s += a;
        n++;
      }
      if (c1 !== c0 && b - b === 0) {
        s += b;
        n++;
      }
      if (r1 !== r0 && d - d === 0) {
        s += d;
        n++;
      }
      if (c1 !== c0 && r1 !== r0 && e - e === 0) {
        s += e;
        n++;
      }
      o[r * w + c] = n > 0 ? s / n : NaN;
    }
  }
  return { width: w, height: h, values: o };
}

/** The pyramid: full resolution, then halvings while either side exceeds one tile (as GDAL's COG driver). */
export function pyramid(full: Level, tileSize: number, resampling: 'average' | 'nearest', alloc: (n: number) => Float32Array): Level[] {
  const levels = [full];
  let l = full;
  while (l.width > tileSize || l.height > tileSize) {
    l = halveGrid(l, resampling, alloc(Math.ceil(l.width / 2) * Math.ceil(l.height / 2)));
    levels.push(l);
  }
  return levels;
}

/**
 * Packs tile (tx, ty) of a level for Predictor 3: NoData for non-finite cells and beyond the edges, each row's floats
 * as 4 byte planes (most significant first), each row differenced byte by byte. `out` has tileSize² · 4 bytes,
 * `row` tileSize floats.
 */
export function packTileFp(
  values: Float32Array | Float64Array,
  width: number,
  height: number,
  tx: number,
  ty: number,
  ts: number,
  nodata: number,
  out: Uint8Array,
  row: Float32Array,
): void {
  const rb = new Uint8Array(row.buffer, row.byteOffset, ts * 4);
  const x0 = tx * ts,
    y0 = ty * ts;
  const nx = Math.min(ts, width - x0);
  for (let r = 0; r < ts; r++) {
    const y = y0 + r;
    if (y < height) {
      const base = y * width + x0;
      for (let c = 0; c < nx; c++) {
        const v = values[base + c];
        row[c] = v - v === 0 ? v : nodata;
      }
      for (let c = nx; c < ts; c++) row[c] = nodata;
    } else {
      row.fill(nodata);
    }
    const o = r * ts * 4;
    // Little-endian host: byte 3 of each float is its most significant.
    for (let c = 0, b = 0; c < ts; c++, b += 4) {
      out[o + c] = rb[b + 3];
      out[o + ts + c] = rb[b + 2];
      out[o + 2 * ts + c] = rb[b + 1];
      out[o + 3 * ts + c] = rb[b];
    }
    for (let i = o + ts * 4 - 1; i > o; i--) out[i] = (out[i] - out[i - 1]) & 255;
  }
}

export function tilesAcross(l: { width: number; height: number }, ts: number): { nx: number; ny: number } {
  return { nx: Math.ceil(l.width / ts), ny: Math.ceil(l.height / ts) };
}
