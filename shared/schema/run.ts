import { z } from 'zod';

/**
 * The request of a whole analysis run (POST /api/runs): data set ids, the engines' parameters, the output grid.
 * The interpolation options follow shared/schema/interp.ts; the model is a data set id or an inline thermal model
 * (validated by shared/schema/model.ts where the run starts).
 */
const datasetId = z.string().min(1).max(100).regex(/^[A-Za-z0-9_-]+$/, 'a data set id has letters, digits, _ and - only');

export const runGridSchema = z.object({
  /** [west, south, east, north] in degrees (default: the sites' extent, padded). */
  bbox: z.tuple([z.number().min(-180).max(180), z.number().min(-90).max(90), z.number().min(-180).max(180), z.number().min(-90).max(90)]).optional(),
  /** Cell size in km (converted to degrees at the centre latitude), or `size` [nx, ny]. */
  cellKm: z.number().gt(0).max(1000).optional(),
  size: z.tuple([z.number().int().min(2).max(10000), z.number().int().min(2).max(10000)]).optional(),
  /** Output CRS, 'EPSG:4326' (default) or 'EPSG:nnnn'. */
  crs: z.string().min(1).max(100).optional(),
});

export const runRequestSchema = z.object({
  title: z.string().max(200).optional(),
  sites: datasetId,
  samples: datasetId.optional(),
  faults: datasetId.optional(),
  /** A regions data set: polygons whose `layers` override the model inside them; the first feature with no
   * `layers` may serve as the mask (cells outside every mask polygon are NoData) when `maskToRegion` is set. */
  regions: datasetId.optional(),
  maskToRegion: z.boolean().optional(),
  interpolation: z.record(z.string(), z.unknown()).default({ method: 'kriging' }),
  model: z.union([datasetId, z.record(z.string(), z.unknown())]),
  isothermsC: z.array(z.number().gt(-50).lt(2000)).min(1).max(10).default([300, 500]),
  depthsKm: z.array(z.number().gt(0).max(300)).max(10).default([5, 10]),
  faciesDepthKm: z.number().gt(0).max(300).optional(),
  maxDepthKm: z.number().gt(0).max(300).optional(),
  contourIntervalKm: z.number().gt(0).max(100).optional(),
  heatFlowContourIntervalMWm2: z.number().gt(0).max(1000).optional(),
  grid: runGridSchema.default({}),
  realizations: z.number().int().min(0).max(5000).optional(),
  /** How a cell's heat-flow error is drawn across cells in each realization (DESIGN.md §3): "full" (default) or "independent". */
  heatFlowErrorCorrelation: z.enum(['full', 'independent']).optional(),
  seed: z.number().int().min(0).max(2 ** 32 - 1).optional(),
});
export type RunRequest = z.infer<typeof runRequestSchema>;

/** A legend a client can draw without knowing the product: continuous ramp or classes, with units. */
export type Legend =
  | { type: 'ramp'; units: string; min: number; max: number; colors: string[] }
  | { type: 'classes'; units: string; classes: { value: number; label: string; color: string }[] };

/** One output layer of a run, as GET /api/runs/:id lists it. */
export interface RunLayerInfo {
  name: string;
  kind: 'raster' | 'vector';
  units: string;
  title: string;
  legend: Legend | null;
  /** Formats available at /api/runs/:id/layers/:name.<ext>. */
  formats: ('tif' | 'png' | 'geojson' | 'csv')[];
  stats?: { min: number | null; max: number | null; median: number | null; noData: number };
}
