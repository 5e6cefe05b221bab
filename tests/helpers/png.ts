// A small PNG reader for tests (PNG specification, W3C 2003: chunks, zlib-compressed scanlines, filter types 0–4),
// for 8-bit RGB (colour type 2) and RGBA (colour type 6) images: returns RGB pixels.
import { inflateSync } from 'node:zlib';

export function decodePngRgb(bytes: Uint8Array): { width: number; height: number; rgb: Uint8Array } {
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let p = 8,
    width = 0,
    height = 0,
    type = 0;
  const idat: Uint8Array[] = [];
  while (p < bytes.length) {
    const len = dv.getUint32(p),
      name = String.fromCharCode(...bytes.subarray(p + 4, p + 8));
    const data = bytes.subarray(p + 8, p + 8 + len);
    if (name === 'IHDR') {
      width = dv.getUint32(p + 8);
      height = dv.getUint32(p + 12);
      if (data[8] !== 8) throw new Error('8-bit PNG only');
      type = data[9];
    } else if (name === 'IDAT') idat.push(data);
    p += 12 + len;
  }
  const bpp = type === 6 ? 4 : type === 2 ? 3 : 0;
  if (bpp === 0) throw new Error(`colour type ${type} not handled`);
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * bpp;
  const px = new Uint8Array(height * stride);
  for (let r = 0; r < height; r++) {
    const f = raw[r * (stride + 1)];
    const line = raw.subarray(r * (stride + 1) + 1, (r + 1) * (stride + 1));
    for (let i = 0; i < stride; i++) {
      const a = i >= bpp ? px[r * stride + i - bpp] : 0;
      const b = r > 0 ? px[(r - 1) * stride + i] : 0;
      const c = i >= bpp && r > 0 ? px[(r - 1) * stride + i - bpp] : 0;
      const pa = Math.abs(b - c),
        pb = Math.abs(a - c),
        pc = Math.abs(a + b - 2 * c);
      const pred = f === 0 ? 0 : f === 1 ? a : f === 2 ? b : f === 3 ? (a + b) >> 1 : pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
      px[r * stride + i] = (line[i] + pred) & 0xff;
    }
  }
  const rgb = new Uint8Array(width * height * 3);
  for (let i = 0; i < width * height; i++) for (let k = 0; k < 3; k++) rgb[i * 3 + k] = px[i * bpp + k];
  return { width, height, rgb };
}
