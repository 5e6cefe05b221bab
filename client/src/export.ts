/**
 * The map as PNG: the WebGL canvas (kept with preserveDrawingBuffer) copied onto a 2-D canvas with a strip below
 * carrying the legend line of every visible layer and the caution, so the picture never travels without them.
 */
import type { Map as MapLibreMap } from 'maplibre-gl';

/** Wraps text into lines no wider than maxWidth px in the context's current font. */
function wrap(ctx: CanvasRenderingContext2D, text: string, maxWidth: number): string[] {
  const out: string[] = [];
  let line = '';
  for (const word of text.split(/\s+/)) {
    const t = line ? `${line} ${word}` : word;
    if (ctx.measureText(t).width > maxWidth && line) {
      out.push(line);
      line = word;
    } else line = t;
  }
  if (line) out.push(line);
  return out;
}

/** Renders the export canvas: map, then the legend lines and the caution beneath. */
export async function mapPng(map: MapLibreMap, legendLines: string[], caution: string, title: string): Promise<Blob> {
  await new Promise<void>((resolve) => {
    map.once('render', () => resolve());
    map.triggerRepaint();
  });
  const src = map.getCanvas();
  const w = src.width;
  const scale = w / src.clientWidth || 1;
  const out = document.createElement('canvas');
  const ctx0 = out.getContext('2d')!;
  ctx0.font = `${12 * scale}px "DejaVu Sans", sans-serif`;
  const textLines = [title, ...legendLines.flatMap((l) => wrap(ctx0, l, w - 20 * scale)), ...wrap(ctx0, caution, w - 20 * scale)];
  const lineH = 16 * scale;
  const strip = Math.ceil(textLines.length * lineH + 14 * scale);
  out.width = w;
  out.height = src.height + strip;
  const ctx = out.getContext('2d')!;
  ctx.fillStyle = '#ffffff';
  ctx.fillRect(0, 0, out.width, out.height);
  ctx.drawImage(src, 0, 0);
  ctx.fillStyle = '#fff4d6';
  ctx.fillRect(0, src.height, w, strip);
  ctx.font = `${12 * scale}px "DejaVu Sans", sans-serif`;
  ctx.textBaseline = 'top';
  textLines.forEach((l, i) => {
    ctx.fillStyle = i === 0 ? '#2a2622' : i > legendLines.length ? '#5a4300' : '#2a2622';
    ctx.fillText(l, 10 * scale, src.height + 7 * scale + i * lineH);
  });
  return new Promise<Blob>((resolve, reject) => out.toBlob((b) => (b ? resolve(b) : reject(new Error('the browser could not encode the PNG'))), 'image/png'));
}

/** Offers a blob as a download. */
export function download(blob: Blob, name: string): void {
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}
