/**
 * The heat-flow corrections data-set action: POST /api/projects/:id/datasets/:dsId/corrections applies the chosen
 * corrections (paleoclimatic history, topographic from the project's terrain, and for wells a BHT method) to a
 * sites or wells data set of the project and attaches the result as a new sites data set, each site carrying its
 * raw heat flow and the size of every correction (shared/heatflow/dataset-corrections.ts). Needs the edit token.
 */
import type { Hono } from 'hono';
import { CAUTION } from '../../shared/caution.ts';
import { InputError } from '../../shared/errors.ts';
import type { Grid } from '../../shared/grid/grid.ts';
import { heatFlowCorrectionRequestSchema, type HeatFlowCorrectionRequest } from '../../shared/heatflow/dataset-corrections.ts';
import type { CorrectionsOutput, CorrectionsTask } from '../workers/compute-worker.ts';
import { jsonBody, requireJsonType, type AppContext } from './context.ts';
import { addToProject, datasetView, heldDataset } from './project-datasets.ts';
import { projectIdOf, requireEditToken } from './projects.ts';
import { parseWith } from './schemas.ts';

/** The project's terrain as a lon/lat grid of elevations (m); 404 when it has none. */
async function projectDem(ctx: AppContext, projectId: string): Promise<Grid<Float32Array>> {
  const t = await ctx.store.getProjectTerrain(projectId);
  if (!t)
    throw new InputError(
      `the topographic correction uses the project's terrain, and project ${projectId} has none: upload a DEM GeoTIFF with POST /api/projects/${projectId}/terrain`,
      [{ field: 'topography', problem: 'the project has no terrain' }],
      'terrain_not_found',
    );
  const m = t.meta;
  return { width: m.width, height: m.height, west: m.west, north: m.north, dx: m.dx, dy: m.dy, crs: 'EPSG:4326', units: 'm', values: t.values };
}

/** The stored body of the request's thermal-model data set (held by the project, kind model); null when none is named. */
async function modelBody(ctx: AppContext, projectId: string, req: HeatFlowCorrectionRequest): Promise<string | null> {
  if (req.model === undefined) return null;
  const held = await heldDataset(ctx, projectId, req.model, 'model');
  if (held.kind !== 'model')
    throw new InputError(
      `data set ${req.model} is ${held.kind}, not a thermal model`,
      [{ field: 'model', problem: `got a ${held.kind} data set` }],
      'wrong_dataset_kind',
    );
  return (await ctx.store.getDataset(held.id))!.body;
}

export function heatFlowCorrectionRoutes(app: Hono, ctx: AppContext): void {
  app.post('/api/projects/:id/datasets/:dsId/corrections', async (c) => {
    const id = await projectIdOf(c, ctx);
    await requireEditToken(c, ctx, id);
    requireJsonType(c);
    const req = parseWith(heatFlowCorrectionRequestSchema, await jsonBody(c), 'correction request', 'invalid_request');
    const held = await heldDataset(ctx, id, c.req.param('dsId'), 'dsId');
    if (held.kind !== 'sites' && held.kind !== 'wells')
      throw new InputError(
        `corrections apply to sites and wells data sets; ${held.id} is ${held.kind}`,
        [{ field: 'dsId', problem: `got a ${held.kind} data set` }],
        'wrong_dataset_kind',
      );
    // The corrections (about a second for a terrain of a few million cells) run on the data pool's worker thread.
    const task: CorrectionsTask = {
      kind: 'heat-flow-corrections',
      datasetKind: held.kind,
      sourceBody: (await ctx.store.getDataset(held.id))!.body,
      request: req,
      dem: req.topography ? await projectDem(ctx, id) : null,
      modelBody: await modelBody(ctx, id, req),
    };
    const { upload, ...out } = await ctx.compute.data.run<CorrectionsOutput>(task, ctx.limits.computeDeadlineSeconds * 1000);
    const { dataset, status } = await addToProject(ctx, id, upload, req.name ?? `${held.name} (corrected)`);
    return c.json(
      {
        dataset: { ...datasetView(id, dataset), deduplicated: status !== 'created' },
        source: { id: held.id, kind: held.kind, name: held.name },
        method: out.method,
        reports: out.reports,
        warnings: out.warnings,
        caution: CAUTION,
      },
      status === 'existing' ? 200 : 201,
    );
  });
}
