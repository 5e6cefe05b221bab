// The isograd stage's report as the run summary carries it (the `structure` member of shared/schema/run.ts): each
// fault's row of the structural report and the outline of the rest.
import { z } from 'zod';
import type { IsogradReport } from '../structure/layer.ts';
import { OPEN_BEYOND_SUPPORT } from '../structure/fault-types.ts';

/** A value with its range, km (shared/structure/fault-types.ts Range). */
const kmRangeSchema = z.strictObject({
  value: z.number(),
  low: z.number(),
  /** null: the upper bound is open (a side's probability band reaches beyond the samples that constrain it). */
  high: z.number().nullable(),
  /** Why the upper bound is open; present only when `high` is null. */
  openReason: z.literal(OPEN_BEYOND_SUPPORT).optional(),
});
/** A zone statement with the samples that support it. */
const zoneStatementSchema = z.looseObject({ zone: z.string(), sampleIds: z.array(z.string()) });

/**
 * A fault's row of the structural report (shared/structure/layer.ts: faultSummary): repeated and missing zones,
 * isograds not reached, offset only, each separation (end by compass, range in km, sense, dip slip when the
 * dips are known) and the crossings set aside; further members (sides, overlap, warnings) pass through.
 */
export const faultReportRowSchema = z.looseObject({
  id: z.string(),
  repeatedZones: z.array(zoneStatementSchema),
  missingZones: z.array(zoneStatementSchema.extend({ side: z.string(), higherSide: z.string(), between: z.array(z.string()).length(2) })),
  notReached: z.array(z.looseObject({ isograd: z.string(), side: z.enum(['left', 'right', 'both']), sideName: z.string() })),
  offsetOnly: z.boolean(),
  separations: z.array(
    z.looseObject({
      isograd: z.string(),
      end: z.string(),
      separationKm: kmRangeSchema,
      sense: z.enum(['dextral', 'sinistral']),
      displacedTowardHigherGrade: z.string(),
      dipSlipKm: kmRangeSchema.optional(),
      slipSense: z.enum(['normal', 'reverse']).optional(),
    }),
  ),
  droppedExcursions: z
    .array(z.strictObject({ isograd: z.string(), side: z.enum(['left', 'right']), fromKm: z.number(), toKm: z.number(), sampleIds: z.array(z.string()) }))
    .describe(
      "crossings set aside: an excursion of a side's indicator profile across 0.5 and back (its two crossings at fromKm and toKm along the trace) not counted as meetings, because the only samples causing it (sampleIds) are contradicted by leave-one-out; also named in warnings",
    ),
});
export type FaultReportRow = z.infer<typeof faultReportRowSchema>;

/**
 * The isograd stage's report (server/runs/isograd-stage.ts, from shared/structure/layer.ts): one summary per
 * isograd, the fault report, each sample's grade, misfits, palaeo-gradients and the method. The members of each row
 * are the structure engine's and pass through unchanged.
 */
export const structureSummarySchema = z.strictObject({
  isograds: z.array(z.looseObject({})),
  faults: z.array(faultReportRowSchema),
  samples: z.array(z.looseObject({ id: z.string(), zone: z.string().nullable(), source: z.enum(['zone', 'facies', 'peak-pt', 'none']) })),
  misfits: z.array(z.looseObject({})),
  paleoGradients: z.array(z.looseObject({})),
  method: z.looseObject({ indicator: z.string() }),
});
/** The structural report as the structure engine types it (the schema above checks its outline). */
export type StructureSummary = Pick<IsogradReport, 'isograds' | 'faults' | 'samples' | 'misfits' | 'paleoGradients' | 'method'>;
