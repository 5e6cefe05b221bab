/**
 * The cells a run leaves empty because no heat-flow site is visible from them across the faults (every site within
 * reach lies behind a fault trace: the straight path to it crosses one), as a vector layer: the area filled and
 * outlined, with a legend that says why. Every thermal layer is empty in the same cells, since each is computed
 * from the heat flow there.
 */
import type { Grid } from '../../shared/grid/grid.ts';
import { cellMaskGeometry } from '../../shared/grid/cell-mask-outline.ts';
import { createGridRuntime, hiddenCellMask } from '../../shared/interp/gridKernel.ts';
import type { PreparedInterpolation } from '../../shared/interp/interpolate.ts';
import { withMethod, type Provenance } from '../../shared/products/provenance.ts';
import { geojsonText } from '../io/export.ts';
import type { RunLayer } from './types.ts';

export const NO_DATA_ACROSS_FAULTS = 'no-data-across-faults';
const COLOR = '#5c5c5c';

/** The layer of cells with no data visible across faults, or null when there are none. */
export function noDataAcrossFaultsLayer(
  prep: PreparedInterpolation,
  heatFlow: Grid<Float32Array>,
  toLonLat: (x: number, y: number) => [number, number],
  provenance: Provenance,
): RunLayer | null {
  if (prep.plan.faults === null || prep.plan.faults.length === 0) return null;
  const mask = hiddenCellMask(createGridRuntime(prep.plan), heatFlow.values);
  const geom = cellMaskGeometry(mask, heatFlow, toLonLat);
  if (geom.cells === 0) return null;
  const reason = 'no data visible across faults: every heat-flow site within reach lies behind a fault trace';
  const properties = { reason, cells: geom.cells };
  const features = [
    { type: 'Feature', geometry: geom.area, properties: { ...properties, part: 'area' } },
    { type: 'Feature', geometry: geom.outline, properties: { ...properties, part: 'outline' } },
  ];
  const p = withMethod(
    provenance,
    `cells with no value: no heat-flow site is visible from them across the faults (straight paths crossing a fault trace are blocked)`,
  );
  return {
    info: {
      name: NO_DATA_ACROSS_FAULTS,
      kind: 'vector',
      units: '',
      title: 'No data visible across faults',
      legend: {
        type: 'classes',
        units: '',
        classes: [{ value: 1, label: `no value: every site within reach lies behind a fault (${geom.cells} cells, every thermal layer)`, color: COLOR }],
      },
      formats: ['geojson'],
      stats: { min: null, max: null, median: null, noData: geom.cells },
    },
    files: [{ ext: 'geojson', bytes: new TextEncoder().encode(geojsonText({ type: 'FeatureCollection', features }, p)) }],
  };
}
