import type { FeatureCollection, PointGeometry } from '../schema/geojson.ts';
import type { WellReport } from './analyze.ts';
import { correctionProperties, type CorrectionProperties } from '../heatflow/sites.ts';

/** Properties of a heat-flow site derived from a well (siteProperties of shared/schema/features.ts, plus extras). */
export interface WellSiteProperties extends Partial<CorrectionProperties> {
  id: string;
  name?: string;
  heatFlowMWm2: number;
  uncertaintyMWm2: number;
  quality: 'high' | 'medium' | 'low';
  gradientCPerKm: number;
  conductivityWmK: number;
  sourceWellId: string;
  heatFlowMethod: string;
  conductivitySource: string;
  corrections: string;
  nPoints: number;
  depthTopM: number;
  depthBottomM: number;
  /** Heat flow over the fitted interval (q at mid-interval), mW/m². */
  intervalHeatFlowMWm2: number;
  /** ∫₀^z_mid A dz added to it, mW/m², and where A came from. */
  heatProductionCorrectionMWm2: number;
  heatProductionSource: string;
  /** q0 fitted directly with the model geotherm (null without a model). */
  modelFitHeatFlowMWm2: number | null;
  /** How heatFlowMWm2 (the surface heat flow) was obtained. */
  surfaceHeatFlowMethod: string;
  elevationM?: number;
}

const SURFACE_METHOD = {
  'model-fit': 'q0 fitted to the temperatures with the model geotherm (its k(T) and A(z))',
  'interval-plus-heat-production': 'q0 = interval heat flow + heat produced above mid-interval (Turcotte & Schubert 2002, §4-6)',
  'interval-uncorrected': 'interval heat flow, not corrected for heat production (no model or heatProductionColumn)',
} as const;

/** Rounds to `d` decimals for export (values keep their full precision in the reports). */
function round(v: number, d: number): number {
  const f = 10 ** d;
  return Math.round(v * f) / f;
}

/**
 * Heat-flow sites (GeoJSON Points at the wells) from the well reports with status 'ok', ready for the
 * interpolation engine: id = the well id, heatFlowMWm2 (the surface heat flow q0) and uncertaintyMWm2 (0.01 mW/m²),
 * the interval heat flow and the heat-production correction beside it, quality,
 * gradientCPerKm (0.001 °C/km), conductivityWmK (0.001 W/m/K, the harmonic mean), sourceWellId, and how the value
 * was made. Wells without a heat flow are not turned into sites (their reports say why).
 */
export function wellSites(reports: WellReport[]): FeatureCollection<PointGeometry, WellSiteProperties> {
  const features: FeatureCollection<PointGeometry, WellSiteProperties>['features'] = [];
  for (const r of reports) {
    if (r.status !== 'ok' || !r.heatFlow || !r.gradient || !r.conductivity) continue;
    const props: WellSiteProperties = {
      id: r.id,
      heatFlowMWm2: round(r.heatFlow.heatFlowMWm2, 2),
      uncertaintyMWm2: round(r.heatFlow.uncertaintyMWm2, 2),
      quality: r.heatFlow.quality,
      gradientCPerKm: round(r.gradient.gradientCPerKm, 3),
      conductivityWmK: round(r.conductivity.harmonicMeanWmK, 3),
      sourceWellId: r.id,
      heatFlowMethod: r.heatFlow.method,
      conductivitySource: r.conductivity.source,
      corrections: [...new Set(r.points.filter((p) => p.used).map((p) => p.method))].sort().join('+'),
      nPoints: r.gradient.nPoints,
      depthTopM: r.gradient.topM,
      depthBottomM: r.gradient.bottomM,
      intervalHeatFlowMWm2: round(r.heatFlow.intervalHeatFlowMWm2, 2),
      heatProductionCorrectionMWm2: round(r.heatFlow.heatProductionCorrectionMWm2, 2),
      heatProductionSource: r.heatFlow.heatProductionSource,
      modelFitHeatFlowMWm2: r.heatFlow.modelFit ? round(r.heatFlow.modelFit.heatFlowMWm2, 2) : null,
      surfaceHeatFlowMethod: SURFACE_METHOD[r.heatFlow.surfaceMethod],
    };
    if (r.heatFlow.corrections) Object.assign(props, correctionProperties(r.heatFlow.uncorrectedHeatFlowMWm2, r.heatFlow.corrections));
    if (r.name !== undefined) props.name = r.name;
    if (r.elevationM !== undefined) props.elevationM = r.elevationM;
    features.push({ type: 'Feature', id: r.id, geometry: { type: 'Point', coordinates: [r.lonLat[0], r.lonLat[1]] }, properties: props });
  }
  return { type: 'FeatureCollection', features };
}
