/**
 * The column panel: click the map (or inspect its centre) to get the temperature–depth column there from
 * POST /api/column. With a finished run the column reads the run's heat-flow surface; before a run it uses the
 * nearest site within NEAREST_SITE_KM, else the model's own surface heat flow.
 */
import { Marker } from 'maplibre-gl';
import type { ThermalModelInput } from '../../shared/schema/model.ts';
import { isUncertainModel } from '../../shared/thermal/realize.ts';
import { ApiError, sendJson } from './api.ts';
import { message, type AppContext } from './context.ts';
import { el, errorBox, replace } from './dom.ts';
import { columnSummary, type ColumnAnswer } from './inspector.ts';
import { columnPlot } from './column-plot.ts';
import type { FeatureCollection } from './structure.ts';

/** The nearest site counts as "at" a clicked point within this distance, km; beyond it the model's value is used. */
const NEAREST_SITE_KM = 10;
/** Realizations of the column's P10–P90 band for a model with distributions (before a run). */
const COLUMN_REALIZATIONS = 200;
/** Kilometres per degree of a great circle on the mean Earth sphere (radius 6371.0088 km × π/180). */
const KM_PER_DEG = 111.195;

export interface ColumnPanel {
  root: HTMLElement;
  inspect(lon: number, lat: number): Promise<void>;
}

interface NearestSite {
  d: number;
  q: number;
  id: string;
}

/** The site nearest to (lon, lat) with a heat flow, in a local equirectangular frame (adequate within ~10 km). */
function nearestSite(sites: FeatureCollection, lon: number, lat: number): NearestSite | null {
  let best: NearestSite | null = null;
  const kx = KM_PER_DEG * Math.cos((lat * Math.PI) / 180);
  for (const f of sites.features) {
    const c = f.geometry?.type === 'Point' ? (f.geometry.coordinates as number[]) : null;
    const q = f.properties?.heatFlowMWm2;
    if (!c || typeof q !== 'number') continue;
    const d = Math.hypot((c[0] - lon) * kx, (c[1] - lat) * KM_PER_DEG);
    if (!best || d < best.d) best = { d, q, id: String(f.properties?.id ?? '') };
  }
  return best;
}

/** The column request before any run: the nearest site's heat flow, or the model's. */
function modelRequest(
  model: ThermalModelInput,
  sites: FeatureCollection,
  lon: number,
  lat: number,
  axis: Record<string, unknown>,
  seed: number,
): { request: Record<string, unknown>; source: string } {
  const best = nearestSite(sites, lon, lat);
  const modelQ = typeof model.surfaceHeatFlowMWm2 === 'number' ? model.surfaceHeatFlowMWm2 : null;
  // The column runs to the model's maximum depth (the bottom of its last layer); a model with distributions
  // gets its P10–P90 band from the server's seeded Monte Carlo.
  Object.assign(axis, { maxDepthKm: Math.min(300, model.layers[model.layers.length - 1].bottomKm) });
  if (isUncertainModel(model)) Object.assign(axis, { realizations: COLUMN_REALIZATIONS, seed });
  if (best && (best.d <= NEAREST_SITE_KM || modelQ === null)) {
    return {
      request: { model, heatFlowMWm2: best.q, ...axis },
      source: `the nearest site, ${best.id}, ${best.d.toFixed(1)} km away (${best.q} mW/m²); no run yet`,
    };
  }
  return {
    request: { model, ...(modelQ !== null ? { heatFlowMWm2: modelQ } : {}), ...axis },
    source: `the model's surface heat flow (${modelQ ?? '—'} mW/m²): no site within ${NEAREST_SITE_KM} km and no run yet`,
  };
}

export function columnPanel(ctx: AppContext, deps: { model: () => ThermalModelInput | null; sites: () => FeatureCollection }): ColumnPanel {
  const body = el('div', {});
  const centreBtn = el('button', { type: 'button', id: 'inspect-centre' }, 'Inspect the map centre');
  const head = el(
    'div',
    {},
    el(
      'p',
      { class: 'empty', id: 'inspector-empty' },
      'Click anywhere on the map to see the temperature–depth column there (or, from the keyboard, pan the map with the arrow keys and inspect its centre).',
    ),
    el('div', { class: 'button-row' }, centreBtn),
  );
  const marker = new Marker({ color: '#d4462c', scale: 0.7 });

  const requestFor = (lon: number, lat: number): { request: Record<string, unknown>; source: string } | null => {
    const run = ctx.app.run?.run;
    const axis: Record<string, unknown> = { isothermsC: ctx.state.params.isothermsC, depthsKm: ctx.state.params.depthsKm };
    if (run && run.status === 'done') {
      const maxDepthKm = run.summary?.maxDepthKm;
      return {
        request: { lon, lat, runId: run.id, ...axis, ...(maxDepthKm !== undefined ? { maxDepthKm } : {}) },
        source: `the run's heat-flow surface at this point (run ${run.id})`,
      };
    }
    const model = deps.model();
    return model ? modelRequest(model, deps.sites(), lon, lat, axis, ctx.state.params.seed) : null;
  };

  const inspect = async (lon: number, lat: number) => {
    ctx.selectTab('inspect');
    document.getElementById('inspector-empty')?.remove();
    marker.setLngLat([lon, lat]).addTo(ctx.map);
    replace(body, el('p', { class: 'loading', id: 'inspector-loading' }, `Computing the column at ${lon.toFixed(4)}°, ${lat.toFixed(4)}°…`));
    const req = requestFor(lon, lat);
    if (!req) {
      replace(body, errorBox('The thermal model has problems: fix the marked fields in the Model tab first.'));
      return;
    }
    try {
      const answer = await sendJson<ColumnAnswer>('POST', '/api/column', req.request);
      ctx.app.lastColumn = { request: req.request, answer };
      const { plot, readout } = columnPlot(answer);
      replace(
        body,
        el('h3', {}, `Column at ${lon.toFixed(4)}°, ${lat.toFixed(4)}°`),
        el('div', { class: 'plot-wrap', id: 'column-plot' }, plot),
        readout,
        columnSummary(answer, req.source),
      );
    } catch (e) {
      replace(body, e instanceof ApiError ? errorBox(`Column: ${e.message}`, e.details) : errorBox(`Column: ${message(e)}`));
    }
  };
  centreBtn.addEventListener('click', () => {
    const c = ctx.map.getCenter();
    void inspect(c.lng, c.lat);
  });
  return { root: el('div', {}, head, body), inspect };
}
