import 'maplibre-gl/dist/maplibre-gl.css';
import './app.css';
import { Map as MapLibreMap, NavigationControl, ScaleControl, setWorkerUrl } from 'maplibre-gl';
import workerUrl from 'maplibre-gl/dist/maplibre-gl-worker.mjs?url';
import { getJson, type AppConfig } from './api.ts';
import { buildStyle, seaMask } from './style.ts';
import type { GeoJSONSource } from 'maplibre-gl';
import { el, legendEntries } from './legend.ts';

setWorkerUrl(workerUrl);

declare global {
  interface Window {
    subtherm?: { map: MapLibreMap; config: AppConfig };
  }
}

function showError(message: string): void {
  const panel = document.getElementById('panel');
  panel?.prepend(el('div', { class: 'error', role: 'alert' }, message));
}

async function start(): Promise<void> {
  const cfg = await getJson<AppConfig>('/api/config');
  document.getElementById('caution')!.textContent = cfg.caution;
  document.getElementById('region-name')!.textContent = `${cfg.demo.name} — invented demo region`;
  const bounds = cfg.terrain?.bounds ?? [-129.2, -38.95, -126.8, -37.05];
  const map = new MapLibreMap({
    container: 'map',
    style: buildStyle(cfg, window.location.origin),
    bounds: [[bounds[0], bounds[1]], [bounds[2], bounds[3]]],
    fitBoundsOptions: { padding: 20 },
    attributionControl: false,
    canvasContextAttributes: { preserveDrawingBuffer: true },
  });
  map.addControl(new NavigationControl({ visualizePitch: false }), 'top-right');
  map.addControl(new ScaleControl({ unit: 'metric' }), 'bottom-right');
  window.subtherm = { map, config: cfg };
  const outline = await getJson<Parameters<typeof seaMask>[0]>(`/api/datasets/${encodeURIComponent(cfg.demo.datasets.regions)}`);
  const setMask = () => (map.getSource('sea-mask') as GeoJSONSource | undefined)?.setData(seaMask(outline));
  if (map.isStyleLoaded()) setMask();
  else map.once('load', setMask);

  const panel = document.getElementById('panel')!;
  panel.append(el('h2', {}, 'Layers'));
  for (const entry of legendEntries()) {
    const id = `toggle-${entry.id}`;
    const box = el('input', { type: 'checkbox', id, checked: '' });
    box.addEventListener('change', () => {
      for (const layer of entry.layers) if (map.getLayer(layer)) map.setLayoutProperty(layer, 'visibility', box.checked ? 'visible' : 'none');
    });
    panel.append(el('section', { class: 'layer', 'data-layer': entry.id }, el('label', { for: id }, box, entry.label), entry.legend));
  }
  map.on('error', (e) => {
    const msg = (e.error as Error | undefined)?.message ?? 'map error';
    console.error(msg);
  });
}

start().catch((e: unknown) => showError(e instanceof Error ? e.message : String(e)));
