/**
 * The cursor readout under the map: longitude, latitude and the value of the top visible computed raster with its
 * unit. The value is decoded from the same raster-dem tile the map draws (value = R·r + G·g + B·b − baseShift;
 * code 0 is no data), at the finest zoom the layer offers up to the view's: the number the colour stands for.
 */
import type { Map as MapLibreMap } from 'maplibre-gl';
import type { TileInfo } from './api.ts';
import { degreeLabel } from './basemap.ts';
import { el } from './dom.ts';

interface RasterInfo {
  tile: TileInfo;
  units: string;
  title: string;
}

/** Raster layers on the map that the readout can read, by MapLibre layer id. */
export const readableRasters = new Map<string, RasterInfo>();

const tileCache = new Map<string, Promise<ImageData | null>>();

function loadTile(url: string): Promise<ImageData | null> {
  let p = tileCache.get(url);
  if (!p) {
    p = fetch(url)
      .then(async (res) => {
        if (!res.ok) return null;
        const bmp = await createImageBitmap(await res.blob());
        const cv = document.createElement('canvas');
        cv.width = bmp.width;
        cv.height = bmp.height;
        const ctx = cv.getContext('2d', { willReadFrequently: true })!;
        ctx.drawImage(bmp, 0, 0);
        return ctx.getImageData(0, 0, bmp.width, bmp.height);
      })
      .catch(() => null);
    if (tileCache.size > 200) tileCache.clear();
    tileCache.set(url, p);
  }
  return p;
}

/** The value of a raster-dem layer at (lon, lat), or null (no data, outside its tiles). */
export async function rasterValue(t: TileInfo, lon: number, lat: number, zoom: number): Promise<number | null> {
  if (t.bounds && (lon < t.bounds[0] || lon > t.bounds[2] || lat < t.bounds[1] || lat > t.bounds[3])) return null;
  const z = Math.max(t.minzoom ?? 0, Math.min(t.maxzoom ?? 12, Math.floor(zoom)));
  const n = 2 ** z;
  const fx = ((lon + 180) / 360) * n;
  const s = Math.sin((lat * Math.PI) / 180);
  const fy = (0.5 - Math.log((1 + s) / (1 - s)) / (4 * Math.PI)) * n;
  const x = Math.floor(fx),
    y = Math.floor(fy);
  if (y < 0 || y >= n) return null;
  const url = t.tiles[0]
    .replace('{z}', String(z))
    .replace('{x}', String(((x % n) + n) % n))
    .replace('{y}', String(y));
  const img = await loadTile(url);
  if (!img) return null;
  const px = Math.min(img.width - 1, Math.floor((fx - x) * img.width)),
    py = Math.min(img.height - 1, Math.floor((fy - y) * img.height));
  const o = (py * img.width + px) * 4;
  const [r, g, b, a] = [img.data[o], img.data[o + 1], img.data[o + 2], img.data[o + 3]];
  if (a === 0 || (r === 0 && g === 0 && b === 0)) return null;
  return r * t.redFactor + g * t.greenFactor + b * t.blueFactor - t.baseShift;
}

/** The top visible readable raster of the map (draw order), if any. */
function topRaster(map: MapLibreMap): [string, RasterInfo] | null {
  const layers = map.getStyle().layers;
  for (let i = layers.length - 1; i >= 0; i--) {
    const info = readableRasters.get(layers[i].id);
    if (info && (map.getLayoutProperty(layers[i].id, 'visibility') ?? 'visible') !== 'none') return [layers[i].id, info];
  }
  return null;
}

function formatValue(v: number): string {
  const a = Math.abs(v);
  return a >= 100 ? v.toFixed(0) : a >= 10 ? v.toFixed(1) : v.toFixed(2);
}

/**
 * Why a computed layer has no value under the pointer, from a shown area layer that gives a `reason` (e.g. "no data
 * visible across faults: …", the run's no-data-across-faults layer): the reason's words before the colon, else "no data".
 */
function noDataReason(map: MapLibreMap, point: { x: number; y: number }): string {
  const f = map.queryRenderedFeatures([point.x, point.y]).find((q) => typeof q.properties?.reason === 'string');
  return f ? String(f.properties.reason).split(':')[0] : 'no data';
}

/** The readout element, fed by the pointer over the map. */
export function cursorReadout(map: MapLibreMap): HTMLElement {
  const pos = el('span', { id: 'readout-position' }, 'move the pointer over the map');
  const val = el('span', { id: 'readout-value' });
  const box = el('div', { class: 'map-readout', id: 'map-readout', 'aria-live': 'off' }, pos, val);
  let seq = 0;
  map.on('mousemove', (e) => {
    const { lng, lat } = e.lngLat.wrap();
    pos.textContent = `${degreeLabel(Number(lng.toFixed(4)), 'lon')} ${degreeLabel(Number(lat.toFixed(4)), 'lat')}`;
    const top = topRaster(map);
    const mine = ++seq;
    if (!top) {
      val.textContent = '';
      return;
    }
    const point = e.point;
    void rasterValue(top[1].tile, lng, lat, map.getZoom()).then((v) => {
      if (mine !== seq) return;
      val.textContent = ` · ${top[1].title}: ${v === null ? noDataReason(map, point) : `${formatValue(v)} ${top[1].units}`}`;
      val.dataset.value = v === null ? '' : String(v);
    });
  });
  return box;
}
