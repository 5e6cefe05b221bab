/**
 * GeoPackage binary geometries (OGC 12-128r18 §2.1.3: "GP" header, version 0, little-endian, xy envelope, then ISO
 * WKB, OGC Simple Features 1.2.1 §8.2) to and from GeoJSON geometries.
 */
import { InputError } from '../../shared/errors.ts';

export type Position = number[];
export interface GeoJsonGeometry {
  type: string;
  coordinates?: unknown;
  geometries?: GeoJsonGeometry[];
}
export interface GeoJsonFeature {
  type: 'Feature';
  geometry: GeoJsonGeometry | null;
  properties: Record<string, unknown> | null;
}
export interface GeoJsonCollection {
  type: 'FeatureCollection';
  features: GeoJsonFeature[];
}

const WKB_CODE: Record<string, number> = { Point: 1, LineString: 2, Polygon: 3, MultiPoint: 4, MultiLineString: 5, MultiPolygon: 6, GeometryCollection: 7 };
const WKB_NAME = Object.fromEntries(Object.entries(WKB_CODE).map(([k, v]) => [v, k])) as Record<number, string>;

class ByteWriter {
  private buf = Buffer.alloc(256);
  length = 0;
  private room(n: number) {
    if (this.length + n <= this.buf.length) return;
    const b = Buffer.alloc(Math.max(this.buf.length * 2, this.length + n));
    this.buf.copy(b, 0, 0, this.length);
    this.buf = b;
  }
  /** Appends `n` bytes written by `write` at the current end. */
  private put(n: number, write: (b: Buffer, at: number) => unknown) {
    this.room(n);
    write(this.buf, this.length);
    this.length += n;
  }
  u8(v: number) {
    this.put(1, (b, at) => b.writeUInt8(v, at));
  }
  u32(v: number) {
    this.put(4, (b, at) => b.writeUInt32LE(v, at));
  }
  i32(v: number) {
    this.put(4, (b, at) => b.writeInt32LE(v, at));
  }
  f64(v: number) {
    this.put(8, (b, at) => b.writeDoubleLE(v, at));
  }
  bytes(): Buffer {
    return this.buf.subarray(0, this.length);
  }
}

function badGeometry(what: string): InputError {
  return new InputError(`cannot write geometry: ${what}`, [{ field: 'geometry', problem: what }], 'bad_geometry');
}

function writeWkb(w: ByteWriter, g: GeoJsonGeometry, env: number[]): void {
  const code = WKB_CODE[g.type];
  if (code === undefined) throw badGeometry(`unknown type ${g.type}`);
  w.u8(1);
  w.u32(code);
  const pt = (p: Position) => {
    const x = Number(p[0]),
      y = Number(p[1]);
    w.f64(x);
    w.f64(y);
    if (x < env[0]) env[0] = x;
    if (x > env[1]) env[1] = x;
    if (y < env[2]) env[2] = y;
    if (y > env[3]) env[3] = y;
  };
  const line = (ps: Position[]) => {
    w.u32(ps.length);
    for (const p of ps) pt(p);
  };
  const poly = (rs: Position[][]) => {
    w.u32(rs.length);
    for (const r of rs) line(r);
  };
  const c = g.coordinates as never;
  switch (g.type) {
    case 'Point': {
      const p = c as Position;
      if (p.length < 2) {
        w.f64(NaN);
        w.f64(NaN);
      } else pt(p);
      break;
    }
    case 'LineString':
      line(c);
      break;
    case 'Polygon':
      poly(c);
      break;
    case 'MultiPoint':
      w.u32((c as Position[]).length);
      for (const p of c as Position[]) writeWkb(w, { type: 'Point', coordinates: p }, env);
      break;
    case 'MultiLineString':
      w.u32((c as Position[][]).length);
      for (const l of c as Position[][]) writeWkb(w, { type: 'LineString', coordinates: l }, env);
      break;
    case 'MultiPolygon':
      w.u32((c as Position[][][]).length);
      for (const p of c as Position[][][]) writeWkb(w, { type: 'Polygon', coordinates: p }, env);
      break;
    case 'GeometryCollection':
      w.u32(g.geometries?.length ?? 0);
      for (const s of g.geometries ?? []) writeWkb(w, s, env);
      break;
  }
}

/** GeoPackage binary geometry (§2.1.3): header with the xy envelope [minx, maxx, miny, maxy], then WKB. */
export function gpkgGeometry(g: GeoJsonGeometry, srsId: number): Buffer {
  const body = new ByteWriter();
  const env = [Infinity, -Infinity, Infinity, -Infinity];
  writeWkb(body, g, env);
  const empty = !(env[0] <= env[1]);
  const head = new ByteWriter();
  head.u8(0x47);
  head.u8(0x50);
  head.u8(0); // "GP", version 0
  head.u8(empty ? 0b10001 : 0b00011); // little-endian; envelope xy (or none and the empty flag)
  head.i32(srsId);
  if (!empty) for (const v of env) head.f64(v);
  return Buffer.concat([head.bytes(), body.bytes()]);
}

/** Decodes GeoPackage binary to GeoJSON (Z and M dropped), applying `project` to each position. */
export function geometryFromGpkg(blob: Uint8Array, project: (p: Position) => Position): GeoJsonGeometry | null {
  const dv = new DataView(blob.buffer, blob.byteOffset, blob.byteLength);
  if (blob.length < 8 || blob[0] !== 0x47 || blob[1] !== 0x50) throw new Error('not a GeoPackage geometry (no "GP" magic)');
  const flags = blob[3];
  if (flags & 0b100000) throw new Error('extended GeoPackage geometry types are not read');
  const envBytes = [0, 32, 48, 48, 64][(flags >> 1) & 7];
  if (envBytes === undefined) throw new Error('bad envelope indicator');
  let o = 8 + envBytes;
  const geom = (): GeoJsonGeometry => {
    const le = dv.getUint8(o) === 1;
    o += 1;
    let t = dv.getUint32(o, le);
    o += 4;
    // ISO WKB adds 1000 (Z), 2000 (M), 3000 (ZM); extended WKB sets the high bits.
    let dims = 2;
    if (t & 0x80000000) dims++;
    if (t & 0x40000000) dims++;
    t &= 0x0fffffff;
    if (t > 1000) {
      dims += Math.floor(t / 1000) === 3 ? 2 : 1;
      t %= 1000;
    }
    const pos = (): Position => {
      const p = [dv.getFloat64(o, le), dv.getFloat64(o + 8, le)];
      o += 8 * dims;
      return project(p);
    };
    const n = () => {
      const v = dv.getUint32(o, le);
      o += 4;
      return v;
    };
    const line = () => Array.from({ length: n() }, pos);
    const name = WKB_NAME[t];
    switch (name) {
      case 'Point':
        return { type: 'Point', coordinates: pos() };
      case 'LineString':
        return { type: 'LineString', coordinates: line() };
      case 'Polygon':
        return { type: 'Polygon', coordinates: Array.from({ length: n() }, line) };
      case 'MultiPoint':
      case 'MultiLineString':
      case 'MultiPolygon': {
        const parts = Array.from({ length: n() }, geom);
        return { type: name, coordinates: parts.map((p) => p.coordinates) };
      }
      case 'GeometryCollection':
        return { type: 'GeometryCollection', geometries: Array.from({ length: n() }, geom) };
      default:
        throw new Error(`WKB geometry type ${t} is not read`);
    }
  };
  if (flags & 0b10000) return null; // empty
  return geom();
}
