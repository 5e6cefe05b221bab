/**
 * A run's layers as files: each product layer encoded as GeoTIFF, PNG and contour GeoJSON with its provenance, the
 * heat-flow layers (the interpolated surface and its kriging standard deviation) and the cross-validation
 * residuals as points.
 */
import type { Grid } from '../../shared/grid/grid.ts';
import { contourGrid, niceContourInterval } from '../../shared/grid/contours.ts';
import { EMBER, HAZE } from '../../shared/grid/ramps.ts';
import type { RunLayerInfo } from '../../shared/schema/run.ts';
import type { InterpolationResult, PointData } from '../../shared/interp/interpolate.ts';
import type { CrossValidation } from '../../shared/interp/crossValidation.ts';
import { layerStats } from '../../shared/products/stats.ts';
import { withMethod, type Provenance } from '../../shared/products/provenance.ts';
import { sharedRampLegend, type ProductLayer } from '../../shared/products/thermal-products.ts';
import { geojsonText, geotiffBytes, pngBytes } from '../io/export.ts';
import type { RunFile, RunLayer } from './types.ts';

function layerInfo(l: ProductLayer): RunLayerInfo {
  return {
    name: l.name,
    kind: 'raster',
    units: l.units,
    title: l.title,
    legend: l.legend,
    formats: l.contours ? ['tif', 'png', 'geojson'] : ['tif', 'png'],
    stats: l.stats,
  };
}

/** Encodes a product layer (GeoTIFF, PNG, contours) with its provenance. */
export function encodeProductLayer(l: ProductLayer, provenance: Provenance): RunLayer {
  const p = withMethod(provenance, l.method);
  const files: RunFile[] = [
    { ext: 'tif', bytes: geotiffBytes(l.grid, `${l.title} (${l.units})`, p, { classes: l.legend.type === 'classes' }) },
    { ext: 'png', bytes: pngBytes(l.grid, l.legend, l.ramp, p, l.title) },
  ];
  if (l.contours) files.push({ ext: 'geojson', bytes: new TextEncoder().encode(geojsonText(l.contours, withMethod(p, `contours of: ${l.method}`))) });
  return { info: layerInfo(l), files };
}

/** The method text of the heat-flow interpolation (IDW, Shepard 1968; ordinary kriging, Cressie 1985 fit). */
export function interpolationMethodText(interp: InterpolationResult, method: 'idw' | 'kriging', withFaults: boolean): string {
  const v = interp.variogram;
  const barriers = withFaults ? ', faults as barriers' : '';
  return method === 'kriging'
    ? `${v?.trend !== undefined && v.trend.kind !== 'none' ? `universal kriging (${v.trend.kind} drift, variogram of least-squares residuals)` : 'ordinary kriging'} of surface heat flow (${v?.model} semivariogram, nugget ${v?.nugget.toFixed(3)}, partial sill ${v?.partialSill.toFixed(3)}, range ${v?.rangeKm.toFixed(2)} km, Cressie 1985 fit)${barriers}`
    : `inverse-distance weighting of surface heat flow (Shepard 1968)${barriers}`;
}

/** The heat-flow layer (with contours every `intervalMWm2`, default a nice interval) and its kriging sd layer. */
export function heatFlowLayers(
  heatFlow: Grid<Float32Array>,
  heatFlowSd: Grid<Float32Array> | null,
  method: string,
  toLonLat: (x: number, y: number) => [number, number],
  intervalMWm2?: number,
): ProductLayer[] {
  const stats = layerStats(heatFlow.values);
  const interval = intervalMWm2 ?? (stats.min !== null && stats.max !== null ? niceContourInterval(stats.min, stats.max) : 5);
  const layers: ProductLayer[] = [
    {
      name: 'heat-flow',
      title: 'Surface heat flow',
      units: 'mW/m²',
      grid: heatFlow,
      legend: sharedRampLegend(EMBER, 'mW/m²', [heatFlow.values]),
      ramp: EMBER,
      method,
      contours: contourGrid(heatFlow, { interval, units: 'mW/m²', toLonLat }),
      stats,
    },
  ];
  if (heatFlowSd !== null)
    layers.push({
      name: 'heat-flow-sd',
      title: 'Surface heat flow, kriging standard deviation',
      units: 'mW/m²',
      grid: heatFlowSd,
      legend: sharedRampLegend(HAZE, 'mW/m²', [heatFlowSd.values]),
      ramp: HAZE,
      method: `kriging standard deviation of ${method}`,
      stats: layerStats(heatFlowSd.values),
    });
  return layers;
}

/** The leave-one-out residuals (observed − predicted, mW/m²) at the sites, as a GeoJSON point layer. */
export function crossValidationLayer(points: PointData, cv: CrossValidation, provenance: Provenance, method: string): RunLayer {
  const idx = new Map(points.ids.map((id, i) => [id, i]));
  const features = cv.residuals
    .map((r) => {
      const i = idx.get(r.id.split('+')[0]) ?? -1;
      return {
        type: 'Feature' as const,
        geometry: { type: 'Point' as const, coordinates: [points.lon[i], points.lat[i]] },
        properties: { id: r.id, observedMWm2: r.observed, predictedMWm2: r.predicted, residualMWm2: r.residual, sdMWm2: r.sd },
      };
    })
    .filter((f) => Number.isFinite(f.geometry.coordinates[0]));
  const st = layerStats(cv.residuals.map((r) => r.residual));
  const cvp = withMethod(provenance, `leave-one-out cross-validation residuals (observed − predicted) of ${method}`);
  return {
    info: {
      name: 'cv-residuals',
      kind: 'vector',
      units: 'mW/m²',
      title: 'Cross-validation residuals (observed − predicted)',
      legend: null,
      formats: ['geojson'],
      stats: st,
    },
    files: [{ ext: 'geojson', bytes: new TextEncoder().encode(geojsonText({ type: 'FeatureCollection', features }, cvp)) }],
  };
}
