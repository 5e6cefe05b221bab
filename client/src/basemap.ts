/**
 * The world base, offline: Natural Earth land and coastlines (public domain, the world-atlas package's 1:50m land,
 * bundled with the client and served by our own server), a graticule whose step follows the zoom with its degrees
 * labelled, a readout of the cursor's longitude, latitude and the value of the top visible computed layer with
 * its unit, and a box to go to a place.
 */
import type { GeoJSONSource, Map as MapLibreMap } from 'maplibre-gl';
import { feature } from 'topojson-client';
import type { Topology, GeometryCollection } from 'topojson-specification';
import landUrl from 'world-atlas/land-50m.json?url';
import { el } from './dom.ts';

type Line = { type: 'Feature'; properties: { label: string; axis: 'lon' | 'lat' }; geometry: { type: 'LineString'; coordinates: number[][] } };

/** Graticule steps, degrees, from coarse to fine; the first whose lines are at least ~90 px apart is drawn. */
const STEPS = [30, 10, 5, 2, 1, 0.5, 0.25, 0.1, 0.05];

/** A degree label: 38°S, 128.5°W, 0°. */
export function degreeLabel(v: number, axis: 'lon' | 'lat'): string {
  const r = Math.round(v * 100) / 100;
  const hemi = r === 0 || Math.abs(r) === 180 ? '' : axis === 'lat' ? (r > 0 ? 'N' : 'S') : r > 0 ? 'E' : 'W';
  return `${Math.abs(r)}°${hemi}`;
}

/** Graticule lines over [west, south, east, north] with spacing `step` degrees, each line labelled. */
export function graticule(bounds: [number, number, number, number], step: number): { type: 'FeatureCollection'; features: Line[] } {
  const [w, s, e, n] = bounds;
  const south = Math.max(-85, Math.floor(s / step) * step),
    north = Math.min(85, Math.ceil(n / step) * step);
  const west = Math.floor(w / step) * step,
    east = Math.ceil(e / step) * step;
  const features: Line[] = [];
  const sub = Math.max(step / 4, (north - south) / 64);
  for (let x = west; x <= east + 1e-9; x += step) {
    const coords: number[][] = [];
    for (let y = south; y <= north + 1e-9; y += sub) coords.push([x, Math.min(y, north)]);
    const lon = ((((x + 180) % 360) + 360) % 360) - 180;
    features.push({ type: 'Feature', properties: { label: degreeLabel(lon, 'lon'), axis: 'lon' }, geometry: { type: 'LineString', coordinates: coords } });
  }
  for (let y = south; y <= north + 1e-9; y += step) {
    features.push({
      type: 'Feature',
      properties: { label: degreeLabel(y, 'lat'), axis: 'lat' },
      geometry: {
        type: 'LineString',
        coordinates: [
          [west, y],
          [east, y],
        ],
      },
    });
  }
  return { type: 'FeatureCollection', features };
}

function updateGraticule(map: MapLibreMap): void {
  const b = map.getBounds();
  const degPerPx = (b.getEast() - b.getWest()) / Math.max(1, map.getContainer().clientWidth);
  const step = STEPS.find((_, i) => i === STEPS.length - 1 || STEPS[i + 1] / degPerPx < 90) ?? 1;
  const span = [Math.max(-540, b.getWest()), Math.max(-90, b.getSouth()), Math.min(540, b.getEast()), Math.min(90, b.getNorth())] as [
    number,
    number,
    number,
    number,
  ];
  void map.getSource<GeoJSONSource>('graticule')?.setData(graticule(span, step));
}

/** Loads the world land into its source and keeps the graticule fitted to the view. */
export async function installWorldBase(map: MapLibreMap): Promise<void> {
  updateGraticule(map);
  map.on('moveend', () => updateGraticule(map));
  const topo = (await (await fetch(landUrl)).json()) as Topology<{ land: GeometryCollection }>;
  void map.getSource<GeoJSONSource>('world-land')?.setData(feature(topo, topo.objects.land));
}

/** Reads "lon, lat" (decimal degrees, or with N/S/E/W letters in either order) into [lon, lat]; null if it cannot. */
export function parsePlace(text: string): [number, number] | null {
  const parts = text
    .trim()
    .split(/[\s,;]+/)
    .filter((p) => p !== '');
  if (parts.length !== 2) return null;
  const read = (p: string): { v: number; axis: 'lon' | 'lat' | null } | null => {
    const m = /^([+-]?\d+(?:\.\d+)?)°?([NSEWnsew])?$/.exec(p);
    if (!m) return null;
    const h = m[2]?.toUpperCase();
    const v = Number(m[1]) * (h === 'S' || h === 'W' ? -1 : 1);
    return { v, axis: h === 'N' || h === 'S' ? 'lat' : h === 'E' || h === 'W' ? 'lon' : null };
  };
  const a = read(parts[0]),
    b = read(parts[1]);
  if (!a || !b) return null;
  const [lon, lat] = a.axis === 'lat' || b.axis === 'lon' ? [b.v, a.v] : [a.v, b.v];
  return Math.abs(lat) <= 90 && Math.abs(lon) <= 180 ? [lon, lat] : null;
}

/** The coordinate box: type a place, press Enter, the map goes there. */
export function goToBox(map: MapLibreMap): HTMLElement {
  const input = el('input', {
    id: 'goto-input',
    placeholder: 'lon, lat (e.g. 72.4, 41.2S)',
    'aria-label': 'Go to a place: longitude, latitude in degrees',
    class: 'goto-input',
  });
  const msg = el('span', { class: 'field-error', id: 'goto-error', 'aria-live': 'polite' });
  const form = el('form', { class: 'goto', role: 'search' }, input, el('button', { type: 'submit', id: 'goto-button' }, 'Go'), msg);
  form.addEventListener('submit', (ev) => {
    ev.preventDefault();
    const p = parsePlace(input.value);
    msg.textContent = p ? '' : 'two numbers: longitude, latitude (−180…180, −90…90), or with N/S/E/W';
    if (p) map.flyTo({ center: p, zoom: Math.max(map.getZoom(), 7), essential: true });
  });
  return form;
}

export type Bbox = [number, number, number, number];

/** The [west, south, east, north] of a feature collection's coordinates, or null when it has none. */
export function featuresBbox(fc: { features: { geometry: { coordinates: unknown } | null }[] }): Bbox | null {
  const b: Bbox = [Infinity, Infinity, -Infinity, -Infinity];
  const walk = (c: unknown): void => {
    if (!Array.isArray(c)) return;
    if (typeof c[0] === 'number' && typeof c[1] === 'number') {
      b[0] = Math.min(b[0], c[0]);
      b[1] = Math.min(b[1], c[1]);
      b[2] = Math.max(b[2], c[0]);
      b[3] = Math.max(b[3], c[1]);
    } else for (const x of c) walk(x);
  };
  for (const f of fc.features) walk(f.geometry?.coordinates);
  return Number.isFinite(b[0]) ? b : null;
}

/** Fits the view to a box (a point gets a regional view around it). */
export function fitBbox(map: MapLibreMap, b: Bbox, animate = true): void {
  const pad = 0.05;
  const w = Math.max(b[2] - b[0], pad),
    h = Math.max(b[3] - b[1], pad);
  const cx = (b[0] + b[2]) / 2,
    cy = (b[1] + b[3]) / 2;
  map.fitBounds(
    [
      [cx - w / 2, Math.max(-85, cy - h / 2)],
      [cx + w / 2, Math.min(85, cy + h / 2)],
    ],
    { padding: 40, maxZoom: 11, animate },
  );
}
