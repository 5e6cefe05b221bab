/**
 * Output helpers of a heat-in-place assessment shared by the CLI and the HTTP routes: the grid's geometry
 * (projected-grid cell centres and units), the polygon outline in grid coordinates, and the printable page.
 */
import { isLonLatCrs } from '../../shared/geodesy/cell-area.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { converter, loadCrsDefinition, metresPerUnit, WGS84_DEF } from '../../shared/interp/projection.ts';
import {
  assessHeatInPlace,
  gridCentresLonLat,
  polygonsOf,
  zonesFromPolygons,
  type AreaGeometry,
  type HeatInPlaceInput,
  type HeatInPlaceResult,
} from '../../shared/resource/index.ts';
import { densityPng, renderReportHtml } from './report-html.ts';

/** Everything the assessment needs beyond the grids and options: projected-grid centres and units. */
export async function gridGeometry(
  grid: Grid<Float32Array | Float64Array>,
  needCentres: boolean,
): Promise<{
  centresLonLat?: { lon: Float64Array; lat: Float64Array };
  metresPerUnit: number;
  toGrid?: (lon: number, lat: number) => [number, number];
  toLonLat?: (x: number, y: number) => [number, number];
}> {
  if (isLonLatCrs(grid.crs)) return { metresPerUnit: 1 };
  const def = await loadCrsDefinition(grid.crs);
  const conv = converter(def, WGS84_DEF);
  const p: [number, number] = [0, 0];
  return {
    metresPerUnit: metresPerUnit(def),
    centresLonLat: needCentres ? gridCentresLonLat(grid, (x, y) => conv.forward([x, y])) : undefined,
    toLonLat: (x, y) => conv.forward([x, y]),
    toGrid: (lon, lat) => {
      p[0] = lon;
      p[1] = lat;
      return conv.inverse(p);
    },
  };
}

/** The polygon's rings in the grid's CRS, for the outline on the map excerpt. */
export function outlineInGrid(
  polygon: AreaGeometry | undefined,
  toGrid: ((lon: number, lat: number) => [number, number]) | undefined,
): number[][][] | undefined {
  if (polygon === undefined) return undefined;
  return polygonsOf(polygon).flatMap((rings) => rings.map((ring) => ring.map((v) => (toGrid ? toGrid(v[0], v[1]) : [v[0], v[1]]))));
}

/** The HTML page of a result (map excerpt of the P50 density with realizations, else the nominal one). */
export function resultHtml(res: HeatInPlaceResult, outline: number[][][] | undefined): string {
  const mc = res.report.monteCarlo !== null;
  const values = mc ? res.output.heatPJkm2!.p50 : res.output.nominalHeatPJkm2;
  const map = densityPng(values, res.layout.width, res.layout.height);
  return renderReportHtml(res.report, { map, grid: res.layout, outline, mapLabel: mc ? 'P50 of the realizations' : 'nominal' });
}

/** An assessment's input without the grid geometry, which `assessOnGrid` derives; zones may come as region polygons. */
export type GridAssessment = Omit<HeatInPlaceInput, 'centresLonLat' | 'metresPerUnit' | 'toLonLat'> & {
  zonePolygons?: { name: string; geometry: AreaGeometry }[];
};

/**
 * The heat-in-place assessment over a grid (shared/resource/assess.ts), with the grid's geometry: polygon and
 * zone-polygon membership by cell centre (through lon/lat on a projected grid), ground areas, and the printable page.
 */
export async function assessOnGrid(a: GridAssessment): Promise<{ result: HeatInPlaceResult; html: () => string }> {
  const { zonePolygons, ...input } = a;
  const geo = await gridGeometry(a.heatFlow, a.polygon !== undefined || zonePolygons !== undefined);
  const zones =
    zonePolygons !== undefined
      ? {
          ...zonesFromPolygons(
            a.heatFlow,
            zonePolygons.map((r) => ({ name: r.name, polygons: polygonsOf(r.geometry) })),
            geo.centresLonLat,
          ),
          source: 'polygons',
        }
      : a.zones;
  const result = assessHeatInPlace({ ...input, zones, centresLonLat: geo.centresLonLat, metresPerUnit: geo.metresPerUnit, toLonLat: geo.toLonLat });
  return { result, html: () => resultHtml(result, outlineInGrid(a.polygon, geo.toGrid)) };
}
