import { z } from 'zod';
import { legendSchema } from '../grid/legend.ts';
import { VARIOGRAM_MODELS } from '../interp/variogram.ts';
import { interpolationOptionsSchema } from './interp.ts';
import { anisotropyEstimateSchema } from './anisotropy.ts';
import { structureSummarySchema, type StructureSummary } from './structure-summary.ts';

export type { Legend } from '../grid/legend.ts';

/**
 * The request of a whole analysis run (POST /api/runs): data set ids, the engines' parameters, the output grid.
 * The interpolation options follow shared/schema/interp.ts; the model is a data set id or an inline thermal model
 * (validated by shared/schema/model.ts where the run starts).
 */
const datasetId = z
  .string()
  .min(1)
  .max(100)
  .regex(/^[A-Za-z0-9_-]+$/, 'a data set id has letters, digits, _ and - only');

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
  /**
   * Dip of the isograd surfaces towards lower grade, degrees (exclusive 0–90): with a fault's dip and dip direction
   * it gives each separation's dip-slip component (the `isograds` verb's --isograd-dip-deg).
   */
  isogradDipDeg: z.number().gt(0).lt(90).optional(),
  grid: runGridSchema.default({}),
  realizations: z.number().int().min(0).max(5000).optional(),
  /** How a cell's heat-flow error is drawn across cells in each realization (DESIGN.md §3): "full" (default) or "independent". */
  heatFlowErrorCorrelation: z.enum(['full', 'independent']).optional(),
  seed: z
    .number()
    .int()
    .min(0)
    .max(2 ** 32 - 1)
    .optional(),
});
export type RunRequest = z.infer<typeof runRequestSchema>;

/** Layer statistics (shared/products/stats.ts): min, median and max of the finite values, and the no-data count. */
export const layerStatsSchema = z.object({
  min: z.number().nullable(),
  max: z.number().nullable(),
  median: z.number().nullable(),
  noData: z.number().int().min(0),
});

/** One output layer of a run, as GET /api/runs/:id lists it. */
export const runLayerInfoSchema = z.object({
  name: z.string(),
  kind: z.enum(['raster', 'vector']),
  units: z.string(),
  title: z.string(),
  legend: legendSchema.nullable(),
  /** Formats available at /api/runs/:id/layers/:name.<ext>. */
  formats: z.array(z.enum(['tif', 'png', 'geojson', 'csv'])),
  stats: layerStatsSchema.optional(),
});
export type RunLayerInfo = z.infer<typeof runLayerInfoSchema>;

// ---------------------------------------------------------------------------------------------------------------
// The run summary: what a finished run reports beside its layers (GET /api/runs/:id → summary).

/** A number that JSON carries as null when it is not finite (NaN, ±∞). */
const finiteOrNull = z.number().nullable();

/** The output grid: its outer west and north edges (shared/grid/grid.ts), cell sizes in CRS units. */
export const runGridSummarySchema = z.strictObject({
  width: z.number().int().min(1),
  height: z.number().int().min(1),
  cells: z.number().int().min(1),
  west: z.number(),
  north: z.number(),
  dx: z.number().gt(0),
  dy: z.number().gt(0),
  crs: z.string(),
  /** The cell size in km on the ground at the grid's centre (shared/interp/projection.ts: buildOutputGrid). */
  cellKm: z.number().gt(0),
  /**
   * The smallest and largest ground side of a cell over the grid, km, as [min, max] (WGS84 ellipsoid; lon/lat cells
   * narrow towards the poles, projected cells follow the projection's scale; shared/geodesy/ground-cell.ts:
   * groundCellKmRange). `cellSizeText` in the same module prints both as the CLI does.
   */
  groundCellKmRange: z.array(z.number().gt(0)).length(2),
});

/** The semivariogram the kriging used (practical-range convention, DESIGN.md §3), with its empirical lags. */
export const variogramSummarySchema = z.strictObject({
  model: z.enum(VARIOGRAM_MODELS),
  /** value units² (mW/m²)² */
  nugget: z.number().min(0),
  partialSill: z.number().min(0),
  rangeKm: z.number().gt(0),
  /** 'fitted' (Cressie 1985 weighted least squares) or 'fixed' (given in the request). */
  source: z.enum(['fitted', 'fixed']),
  /** Matheron's estimator per lag: mean pair distance (km), γ̂ (value units²) and the pair count. */
  empirical: z.array(z.strictObject({ lagKm: z.number(), gamma: z.number(), pairs: z.number().int().min(0) })),
  /** The geometric anisotropy the kriging used (major-axis azimuth, ° clockwise from north; minor/major ratio); null: isotropic. Absent in older runs. */
  anisotropy: z.strictObject({ angleDeg: z.number(), ratio: z.number() }).nullable().optional(),
  /** With anisotropy 'auto': directional semivariograms, the variogram map, the fitted angle and ratio and whether they were used. */
  anisotropyEstimate: anisotropyEstimateSchema.optional(),
});
export type VariogramSummary = z.infer<typeof variogramSummarySchema>;

/**
 * The drift of the mean the kriging used (shared/interp/drift.ts): none (ordinary kriging), a linear or quadratic
 * polynomial in the coordinates (universal kriging, the variogram fitted on least-squares residuals), or external (a
 * covariate grid: the run's `interpolation.trend` = `drift:<datasetId>`, a data set of kind grid); how it was
 * chosen; with auto, each drift's leave-one-out RMSE (mW/m²) and MSDR side by side. With an external drift,
 * `covariate` gives the grid's name, its mean and sd at the sites and the least-squares trend intercept + slope·s
 * (mW/m², and mW/m² per unit of the grid).
 */
export const trendSummarySchema = z.strictObject({
  kind: z.enum(['none', 'linear', 'quadratic', 'external']),
  selectedBy: z.enum(['given', 'cross-validation']),
  /** Fraction of the sites' variance the least-squares trend explains (null for none). */
  explainedVarianceFraction: z.number().nullable(),
  candidates: z
    .array(
      z.strictObject({
        kind: z.enum(['none', 'linear', 'quadratic', 'external']),
        model: z.enum(VARIOGRAM_MODELS).nullable(),
        cvRmse: z.number().nullable(),
        msdr: z.number().nullable(),
        problem: z.string().nullable(),
      }),
    )
    .optional(),
  covariate: z.strictObject({ name: z.string(), mean: z.number(), sd: z.number(), intercept: z.number(), slope: z.number() }).optional(),
});

/** Leave-one-out cross-validation of the heat-flow interpolation (mW/m² for the errors; ratios unitless). */
export const crossValidationSummarySchema = z.strictObject({
  n: z.number().int().min(0),
  rmse: finiteOrNull,
  meanError: finiteOrNull,
  /** Mean of residual / kriging sd (null without a standard deviation). */
  meanStandardizedError: finiteOrNull,
  /** Mean of (residual / kriging sd)²: near 1 when the kriging variance is right. */
  meanSquaredDeviationRatio: finiteOrNull,
});
export type CrossValidationSummary = z.infer<typeof crossValidationSummarySchema>;

/** Cells of the `inconsistent` grid per flag (shared/products/thermal-grids.ts: inconsistencyCounts). */
export const inconsistencyCountsSchema = z.strictObject({
  inconsistent: z.number().int().min(0),
  heatFlowExhausted: z.number().int().min(0),
  conductivityUndefined: z.number().int().min(0),
  nonPositiveHeatFlow: z.number().int().min(0),
  meltOnset: z.number().int().min(0),
  noData: z.number().int().min(0),
});

/**
 * A product's central values over the grid (shared/products/central-values.ts): the realizations' per-cell mean
 * (the central value) and P50 averaged over the cells where they and the deterministic map are defined, the
 * deterministic map's average over the same cells, and mean − deterministic; units those of the product.
 */
export const productCentralValueSchema = z.strictObject({
  product: z.string(),
  units: z.string(),
  cells: z.number().int().min(0),
  /** Cells with heat flow where the mean is NoData: some valid realization does not reach the isotherm (or is past the melt onset). */
  cellsMeanUndefined: z.number().int().min(0),
  cellsDeterministicUndefined: z.number().int().min(0),
  mean: finiteOrNull,
  p50: finiteOrNull,
  deterministic: finiteOrNull,
  difference: finiteOrNull,
});

/** The Monte Carlo percentile pass of a run (null when the run asked for no realizations). */
export const monteCarloSummarySchema = z.strictObject({
  realizations: z.number().int().min(1),
  seed: z.number().int().min(0),
  /** The old per-cell error model (deprecated); null when the heat-flow fields are conditional simulations. */
  heatFlowErrorCorrelation: z.enum(['full', 'independent']).nullable(),
  /** Where each realization's heat flow comes from, in words. */
  heatFlow: z.string(),
  /** Model draws that were physically impossible and left out of the percentiles. */
  rejectedDraws: z.number().int().min(0),
  withHeatFlowSd: z.boolean(),
  /**
   * Cell-realizations whose heat flow runs out above the maximum depth (the temperature peaks where q = 0, so an
   * isotherm hotter than the peak counts as not reached), and the cells with at least one (absent in older runs).
   */
  heatFlowExhausted: z.strictObject({ cellRealizations: z.number().int().min(0), cells: z.number().int().min(0) }).optional(),
  /** Per isotherm, then per depth: the central value (mean of the realizations) beside the deterministic map (absent in older runs). */
  centralValues: z.array(productCentralValueSchema).optional(),
  /** The conditional simulation of the heat-flow fields (server/runs/heat-flow-simulation.ts). */
  heatFlowSimulation: z
    .strictObject({
      method: z.string(),
      variogram: z.strictObject({
        model: z.string(),
        nugget: z.number(),
        partialSill: z.number(),
        rangeKm: z.number(),
        anisotropy: z.strictObject({ angleDeg: z.number(), ratio: z.number() }).nullable(),
        source: z.string(),
        space: z.string(),
      }),
      transform: z.enum(['normal-score', 'none']),
      sampler: z.enum(['cholesky', 'lattice']),
      neighbors: z.union([z.number(), z.literal('all')]),
      streams: z.string(),
      /** The run's faults were barriers to the conditioning (absent in runs made before barriers were honoured). */
      faultBarriers: z.boolean().optional(),
      /** The drift the conditioning universal kriging carried (none: ordinary kriging; absent in older runs). */
      trend: z.enum(['none', 'linear', 'quadratic', 'external']).optional(),
      /**
       * Cell declustering of the normal-score transform's histogram (absent: equal weights): the cell side (km), how
       * it was chosen, and the sites' plain and declustered mean and sd (mW/m²).
       */
      declustering: z
        .strictObject({
          cellKm: z.number(),
          selectedBy: z.enum(['given', 'minimum declustered mean']),
          naiveMean: z.number(),
          declusteredMean: z.number(),
          naiveSd: z.number(),
          declusteredSd: z.number(),
        })
        .optional(),
      /** Sum of realization 0 over the cells with data: a re-simulation must give the same. */
      checksum: z.number(),
      /** Mean, median and sd over the realizations of the regional mean heat flow, the kriged map's, and the difference (mW/m²). */
      regionalMeanMWm2: z.number().nullable(),
      regionalMedianMWm2: z.number().nullable(),
      regionalMeanSdMWm2: z.number().nullable().optional(),
      krigedRegionalMeanMWm2: z.number().nullable(),
      differenceMWm2: z.number().nullable(),
    })
    .optional(),
});

export type HeatFlowSimulationSummary = NonNullable<z.infer<typeof monteCarloSummarySchema>['heatFlowSimulation']>;
export type HeatFlowCentralValues = Pick<
  HeatFlowSimulationSummary,
  'regionalMeanMWm2' | 'regionalMedianMWm2' | 'regionalMeanSdMWm2' | 'krigedRegionalMeanMWm2' | 'differenceMWm2'
>;

/** Where the run came from: the tool, its version, the SHA-256 of each input and of the whole computation. */
export const runProvenanceSummarySchema = z.strictObject({
  tool: z.string(),
  version: z.string(),
  contentHash: z.string(),
  inputs: z.record(z.string(), z.string()),
});

export const runSummarySchema = z.strictObject({
  grid: runGridSummarySchema,
  interpolation: z.strictObject({
    method: interpolationOptionsSchema.shape.method,
    variogram: variogramSummarySchema.nullable(),
    /** Kriging runs: the drift of the mean (absent for IDW and for runs made before drifts existed). */
    trend: trendSummarySchema.optional(),
    /**
     * Cells of the heat-flow grid (and so of every thermal layer) left with no value, by cause: no heat-flow site
     * visible across the faults (every site within the search radius lies behind a fault trace; the map's
     * "no-data-across-faults" layer shows them), no site within the search radius, or masked (outside the region or
     * beyond maxDistanceKm). Absent in older runs.
     */
    emptyCells: z
      .strictObject({ noDataAcrossFaults: z.number().int().min(0), beyondSearchRadius: z.number().int().min(0), masked: z.number().int().min(0) })
      .optional(),
  }),
  crossValidation: crossValidationSummarySchema.nullable(),
  isothermsC: z.array(z.number()),
  depthsKm: z.array(z.number()),
  /** km below the surface */
  faciesDepthKm: z.number(),
  /** The depth the isotherm and solidus searches stop at, km. */
  maxDepthKm: z.number(),
  /** Labels of the regional model overrides that were applied. */
  overrides: z.array(z.string()),
  inconsistent: inconsistencyCountsSchema,
  monteCarlo: monteCarloSummarySchema.nullable(),
  /** Present when the run had grade samples. */
  structure: structureSummarySchema.optional(),
  /** Statistics per layer name (null for a layer without statistics). */
  layers: z.record(z.string(), layerStatsSchema.nullable()),
  provenance: runProvenanceSummarySchema,
  /** Wall time per stage, ms (measurements, not results). */
  timingsMs: z.record(z.string(), z.number()),
});
export type RunSummary = Omit<z.infer<typeof runSummarySchema>, 'structure'> & { structure?: StructureSummary };
export type { StructureSummary };

// ---------------------------------------------------------------------------------------------------------------
// The run's event stream (GET /api/runs/:id/events, Server-Sent Events): `progress` while queued or running, then
// one `end` when it is done, failed or cancelled. Each event's data is the run's state at that moment.

export const RUN_STATUSES = ['queued', 'running', 'done', 'failed', 'cancelled'] as const;
export type RunStatusName = (typeof RUN_STATUSES)[number];

const runStateFields = {
  id: z.string(),
  /** 0..1, never decreasing during a run. */
  progress: z.number().min(0).max(1),
  message: z.string(),
  /** While queued: 1-based place in the fair (round-robin) start order. */
  position: z.number().int().min(1).optional(),
  /** While queued or running: seconds until the run should end; null until the server has measured its rate. */
  estimateSeconds: z.number().min(0).nullable().optional(),
};

/** `event: progress` */
export const runProgressEventSchema = z.strictObject({ ...runStateFields, status: z.enum(['queued', 'running']) });
/** `event: end` */
export const runEndEventSchema = z.strictObject({ ...runStateFields, status: z.enum(['done', 'failed', 'cancelled']) });
export type RunProgressEvent = z.infer<typeof runProgressEventSchema>;
export type RunEndEvent = z.infer<typeof runEndEventSchema>;
/** A run's state as the event stream and GET /api/runs/:id report it. */
export type RunStateEvent = RunProgressEvent | RunEndEvent;
/** The event names of the stream, by schema. */
export const RUN_EVENTS = { progress: runProgressEventSchema, end: runEndEventSchema } as const;
