/**
 * What a project owns: its named data sets (GET/POST /api/projects/:id/datasets, GET/PATCH/DELETE …/datasets/:dsId)
 * and its runs (GET/POST /api/projects/:id/runs, POST …/runs/check). Changes need the project's edit token.
 * Uploads are de-duplicated by content (kind + SHA-256 of the validated body): the same content uploaded twice is
 * one stored data set. A project holds at most `maxProjectStorageBytes` (413 naming the limit). Detaching a data
 * set removes it from the project's list; its content stays while any project, run or saved revision names it.
 * An upload with `replace=<dsId>` takes the place of that data set (same kind): it gets its name, and the old one is
 * detached, both in one store transaction.
 */
import type { Context, Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import { runRequestSchema } from '../../shared/schema/run.ts';
import type { ProjectDatasetRecord } from '../store/types.ts';
import { datasetChangedError } from '../store/errors.ts';
import { bodyBytes, clientAddress, jsonBody, requireJsonType, singleQuery, type AppContext } from './context.ts';
import { parseUpload, storedOf, type ParsedUpload } from './datasets.ts';
import { projectIdOf, requireEditToken } from './projects.ts';
import { farApartWarnings, requireRunInputs, resolveRunDatasets, submitRun } from './runs.ts';
import { datasetPatchSchema, datasetNameSchema, idSchema, parseWith, projectDatasetQuerySchema } from './schemas.ts';
import { z } from 'zod';
import { gridBbox, gridSpecOf } from '../../shared/grid/grid.ts';
import { demFromUpload } from '../terrain-upload.ts';
import { gridDatasetBytes } from '../io/grid-dataset.ts';
import { pngTile, tileAddress } from './png-tiles.ts';
import { TerrainTiles, TERRAIN_MAX_ZOOM, TERRAIN_MIN_ZOOM } from '../terrain.ts';

/** Default names of uploads that come without one, by kind. */
const KIND_NAMES: Record<string, string> = {
  sites: 'Heat-flow sites',
  samples: 'Grade samples',
  faults: 'Faults',
  wells: 'Wells',
  regions: 'Regions',
  model: 'Thermal model',
  grid: 'Covariate grid',
};

/** A data set the project holds, by the raw id in `field` (404 naming the field otherwise). */
export async function heldDataset(ctx: AppContext, projectId: string, raw: string, field: string): Promise<ProjectDatasetRecord> {
  const id = idSchema.safeParse(raw);
  const rec = id.success ? await ctx.store.getProjectDataset(projectId, id.data) : null;
  if (!rec)
    throw new InputError(`project ${projectId} holds no data set with id "${raw}"`, [{ field, problem: 'not found in this project' }], 'dataset_not_found');
  return rec;
}

/** A data set as the API lists it. */
export function datasetView(projectId: string, d: ProjectDatasetRecord) {
  return {
    id: d.id,
    kind: d.kind,
    name: d.name,
    featureCount: d.featureCount,
    bbox: d.bbox,
    bytes: d.bytes,
    contentHash: d.contentHash,
    uploadedAt: d.uploadedAt,
    url: `/api/projects/${projectId}/datasets/${d.id}`,
  };
}

/** 413 when adding `bytes` would take the project over its storage quota. */
export async function checkQuota(ctx: AppContext, projectId: string, bytes: number, what: string, freedBytes = 0): Promise<void> {
  // A replacement frees the bytes of the data set it detaches.
  const used = (await ctx.store.projectStorageBytes(projectId)) - freedBytes;
  const limit = ctx.limits.maxProjectStorageBytes;
  if (used + bytes > limit) {
    const mb = (n: number) => `${(n / 1048576).toFixed(1)} MB`;
    throw new InputError(
      `${what} (${mb(bytes)}) would take this project to ${mb(used + bytes)}, over its storage limit of ${mb(limit)} (${limit} bytes): remove data sets the project no longer needs`,
      [{ field: '(body)', problem: `a project holds at most ${limit} bytes (SUBTHERM_MAX_PROJECT_STORAGE_BYTES); it holds ${used}` }],
      'project_quota_exceeded',
    );
  }
}

/** A name not yet used by another data set of the project (`except` aside): "Faults", "Faults (2)", … */
function freeName(existing: ProjectDatasetRecord[], wanted: string, except: string[] = []): string {
  const taken = new Set(existing.filter((d) => !except.includes(d.id)).map((d) => d.name));
  if (!taken.has(wanted)) return wanted;
  for (let k = 2; ; k++) if (!taken.has(`${wanted} (${k})`)) return `${wanted} (${k})`;
}

/** Attaches an upload to a project (de-duplicated by content; quota checked for content new to the project). */
export async function addToProject(
  ctx: AppContext,
  projectId: string,
  up: ParsedUpload,
  name: string | undefined,
): Promise<{ dataset: ProjectDatasetRecord; status: 'created' | 'existing' | 'attached' }> {
  const found = await ctx.store.findDatasetByContent(up.kind, up.contentHash);
  const held = found ? await ctx.store.getProjectDataset(projectId, found.id) : null;
  if (held) {
    // Already in the project: nothing stored twice; a new name given with the upload renames it.
    if (name !== undefined && name !== held.name)
      await ctx.store.renameProjectDataset(projectId, held.id, freeName(await ctx.store.listProjectDatasets(projectId), name, [held.id]));
    return { dataset: (await ctx.store.getProjectDataset(projectId, held.id))!, status: 'existing' };
  }
  await checkQuota(ctx, projectId, up.body.byteLength, `this ${up.kind} data set`);
  const rec = found ?? (await ctx.store.putDataset(storedOf(up)));
  const finalName = freeName(await ctx.store.listProjectDatasets(projectId), name ?? up.suggestedName ?? KIND_NAMES[up.kind] ?? up.kind);
  return { dataset: await ctx.store.attachDataset(projectId, rec.id, finalName), status: found ? 'attached' : 'created' };
}

/** POST /api/projects/:id/datasets: an upload into the project, or with `replace` in place of one of its data sets. */
async function uploadIntoProject(c: Context, ctx: AppContext): Promise<Response> {
  const id = await projectIdOf(c, ctx);
  await requireEditToken(c, ctx, id);
  const q = parseWith(projectDatasetQuerySchema, singleQuery(c), 'query', 'bad_query');
  const old = q.replace !== undefined ? await heldDataset(ctx, id, q.replace, 'replace') : null;
  if (old && old.kind !== q.kind)
    throw new InputError(
      `data set ${old.id} holds ${old.kind}: its replacement must be ${old.kind} too, got kind=${q.kind}`,
      [{ field: 'kind', problem: `expected ${old.kind} to replace ${old.id}` }],
      'wrong_dataset_kind',
    );
  // The upload is validated before anything of the project changes.
  const up = await parseUpload(c, ctx, q.kind);
  const { dataset, status } = old ? await replaceInProject(ctx, id, up, old, q.name ?? old.name) : await addToProject(ctx, id, up, q.name);
  const view = datasetView(id, dataset);
  return c.json(
    { ...view, deduplicated: status !== 'created', ...(old ? { replaced: old.id } : {}), warnings: up.warnings },
    status === 'existing' ? 200 : 201,
  );
}

/**
 * Puts an upload in the place of the project's data set `old` under `name`: the quota counts the bytes `old` frees;
 * the content is stored once (de-duplicated); detaching `old` and attaching the new one are one store transaction, so
 * a failure leaves the project as it was. `old`'s content is then deleted unless a run or saved state still names it.
 */
async function replaceInProject(
  ctx: AppContext,
  projectId: string,
  up: ParsedUpload,
  old: ProjectDatasetRecord,
  name: string,
): Promise<{ dataset: ProjectDatasetRecord; status: 'created' | 'existing' | 'attached' }> {
  const found = await ctx.store.findDatasetByContent(up.kind, up.contentHash);
  if (found?.id === old.id) {
    // The same content again: nothing to replace; a new name given with it renames the data set, as an upload does.
    if (name !== old.name) await ctx.store.renameProjectDataset(projectId, old.id, freeName(await ctx.store.listProjectDatasets(projectId), name, [old.id]));
    const now = await ctx.store.getProjectDataset(projectId, old.id);
    if (!now) throw datasetChangedError(projectId, old.id);
    return { dataset: now, status: 'existing' };
  }
  const held = found ? await ctx.store.getProjectDataset(projectId, found.id) : null;
  if (!held) await checkQuota(ctx, projectId, up.body.byteLength, `this ${up.kind} data set`, old.bytes);
  const rec = found ?? (await ctx.store.putDataset(storedOf(up)));
  const finalName = freeName(await ctx.store.listProjectDatasets(projectId), name, [old.id, rec.id]);
  let dataset: ProjectDatasetRecord;
  try {
    dataset = await ctx.store.replaceProjectDataset(projectId, old.id, rec.id, finalName);
  } catch (e) {
    // Nothing of the project changed: content stored for this upload alone goes again.
    if (!found) await ctx.store.pruneDataset(rec.id).catch(() => false);
    throw e;
  }
  await ctx.store.pruneDataset(old.id);
  return { dataset, status: held ? 'existing' : found ? 'attached' : 'created' };
}

/** A project's terrain as the API describes it: a MapLibre raster-dem source plus where it came from. */
function terrainView(
  projectId: string,
  meta: { name: string; width: number; height: number; west: number; north: number; dx: number; dy: number; sourceCrs: string; sourceBytes: number },
  uploadedAt: string,
) {
  const bbox = gridBbox({ ...meta, crs: 'EPSG:4326' });
  return {
    name: meta.name,
    bbox,
    width: meta.width,
    height: meta.height,
    sourceCrs: meta.sourceCrs,
    sourceBytes: meta.sourceBytes,
    uploadedAt,
    source: {
      type: 'raster-dem',
      tiles: [`/api/projects/${projectId}/terrain/{z}/{x}/{y}.png`],
      bounds: bbox,
      minzoom: TERRAIN_MIN_ZOOM,
      maxzoom: TERRAIN_MAX_ZOOM,
      encoding: 'mapbox',
      tileSize: 256,
    },
  };
}

const terrainQuerySchema = z.object({ name: datasetNameSchema.optional() });

/** A project's data sets; its terrain and its runs are mounted with them (projectTerrainRoutes, projectRunRoutes). */
export function projectDatasetRoutes(app: Hono, ctx: AppContext): void {
  app.get('/api/projects/:id/datasets', async (c) => {
    const id = await projectIdOf(c, ctx);
    const datasets = (await ctx.store.listProjectDatasets(id)).map((d) => datasetView(id, d));
    const terrain = await ctx.store.getProjectTerrain(id);
    return c.json(
      {
        id,
        datasets,
        terrain: terrain ? terrainView(id, terrain.meta, terrain.createdAt) : null,
        storage: { bytes: await ctx.store.projectStorageBytes(id), limitBytes: ctx.limits.maxProjectStorageBytes },
      },
      200,
      { 'cache-control': 'no-store' },
    );
  });

  app.post('/api/projects/:id/datasets', (c) => uploadIntoProject(c, ctx));

  app.get('/api/projects/:id/datasets/:dsId', async (c) => {
    const id = await projectIdOf(c, ctx);
    const held = await heldDataset(ctx, id, c.req.param('dsId') ?? '', 'dsId');
    const rec = (await ctx.store.getDataset(held.id))!;
    if (rec.kind === 'grid') {
      const file = `${held.name.replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '') || held.id}.tif`;
      return c.body(gridDatasetBytes(rec.body), 200, {
        'content-type': 'image/tiff',
        etag: `"${rec.contentHash}"`,
        'content-disposition': `attachment; filename="${file}"`,
      });
    }
    const isModel = rec.kind === 'model';
    // A model downloads under its project name; every download carries a file name made of that name.
    const body = isModel ? JSON.stringify({ name: held.name, ...(JSON.parse(rec.body) as Record<string, unknown>) }, null, 2) : rec.body;
    const file = `${held.name.replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '') || held.id}.${isModel ? 'json' : 'geojson'}`;
    return c.body(body, 200, {
      'content-type': isModel ? 'application/json' : 'application/geo+json',
      etag: `"${rec.contentHash}"`,
      'content-disposition': `attachment; filename="${file}"`,
    });
  });

  app.patch('/api/projects/:id/datasets/:dsId', async (c) => {
    const id = await projectIdOf(c, ctx);
    await requireEditToken(c, ctx, id);
    const held = await heldDataset(ctx, id, c.req.param('dsId') ?? '', 'dsId');
    requireJsonType(c);
    const { name } = parseWith(datasetPatchSchema, await jsonBody(c), 'data set change', 'invalid_dataset_change');
    const clash = (await ctx.store.listProjectDatasets(id)).find((d) => d.id !== held.id && d.name === name);
    if (clash)
      throw new InputError(
        `another data set of this project is already named "${name}"`,
        [{ field: 'name', problem: `used by data set ${clash.id}` }],
        'name_taken',
      );
    await ctx.store.renameProjectDataset(id, held.id, name);
    return c.json(datasetView(id, (await ctx.store.getProjectDataset(id, held.id))!));
  });

  app.delete('/api/projects/:id/datasets/:dsId', async (c) => {
    const id = await projectIdOf(c, ctx);
    await requireEditToken(c, ctx, id);
    const held = await heldDataset(ctx, id, c.req.param('dsId') ?? '', 'dsId');
    await ctx.store.detachProjectDataset(id, held.id);
    const contentDeleted = await ctx.store.pruneDataset(held.id);
    return c.json({ id: held.id, detached: true, contentKept: !contentDeleted });
  });
  projectTerrainRoutes(app, ctx);
  projectRunRoutes(app, ctx);
}

/** The tile cutter of a project's stored terrain, kept for the last 8 projects asked (404 when it has none). */
async function cachedTerrainTiles(ctx: AppContext, cache: Map<string, { hash: string; tiles: TerrainTiles }>, id: string): Promise<TerrainTiles> {
  const hit = cache.get(id);
  if (hit) return hit.tiles;
  const t = await ctx.store.getProjectTerrain(id);
  if (!t) throw new InputError(`project ${id} has no terrain`, [{ field: 'terrain', problem: 'none uploaded' }], 'terrain_not_found');
  const entry = { hash: t.blobHash, tiles: new TerrainTiles({ ...t.meta, crs: 'EPSG:4326', values: t.values }) };
  cache.set(id, entry);
  if (cache.size > 8) cache.delete(cache.keys().next().value as string);
  return entry.tiles;
}

/**
 * A project's terrain: a DEM GeoTIFF, checked before any pixel is decoded (server/terrain-upload.ts); nothing of the
 * project changes unless every check passes. Its raster-dem tiles are cut from the stored grid (the last 8 kept).
 */
function projectTerrainRoutes(app: Hono, ctx: AppContext): void {
  const terrainTiles = new Map<string, { hash: string; tiles: TerrainTiles }>();
  app.post('/api/projects/:id/terrain', async (c) => {
    const id = await projectIdOf(c, ctx);
    await requireEditToken(c, ctx, id);
    const q = parseWith(terrainQuerySchema, singleQuery(c), 'query', 'bad_query');
    const type = (c.req.header('content-type') ?? '').split(';')[0].trim().toLowerCase();
    if (type !== 'image/tiff' && type !== 'image/geotiff' && type !== 'application/octet-stream') {
      throw new InputError(
        `a terrain is a GeoTIFF: send it as image/tiff, got "${type || '(none)'}"`,
        [{ field: 'content-type', problem: 'expected image/tiff' }],
        'unsupported_media_type',
      );
    }
    const bytes = await bodyBytes(c);
    const { grid, sourceCrs } = await demFromUpload(bytes, ctx.limits.maxTerrainBytes);
    const old = await ctx.store.getProjectTerrain(id);
    await checkQuota(ctx, id, grid.values.byteLength - (old ? old.values.byteLength : 0), 'this terrain');
    const meta = {
      ...gridSpecOf(grid),
      crs: 'EPSG:4326',
      units: 'm',
      sourceCrs,
      sourceBytes: bytes.byteLength,
      name: q.name ?? 'Terrain',
    };
    const rec = await ctx.store.putProjectTerrain(id, grid.values, meta);
    terrainTiles.delete(id);
    return c.json(terrainView(id, meta, rec.createdAt), 201);
  });

  app.get('/api/projects/:id/terrain', async (c) => {
    const id = await projectIdOf(c, ctx);
    const t = await ctx.store.getProjectTerrain(id);
    if (!t)
      throw new InputError(
        `project ${id} has no terrain: upload a DEM GeoTIFF with POST /api/projects/${id}/terrain`,
        [{ field: 'terrain', problem: 'none uploaded' }],
        'terrain_not_found',
      );
    return c.json(terrainView(id, t.meta, t.createdAt));
  });

  // Removing the terrain takes it off the project (and out of its storage quota); its tiles go with it.
  app.delete('/api/projects/:id/terrain', async (c) => {
    const id = await projectIdOf(c, ctx);
    await requireEditToken(c, ctx, id);
    if (!(await ctx.store.deleteProjectTerrain(id)))
      throw new InputError(`project ${id} has no terrain to remove`, [{ field: 'terrain', problem: 'none uploaded' }], 'terrain_not_found');
    terrainTiles.delete(id);
    return c.json({ id, terrain: null, removed: true });
  });

  app.get('/api/projects/:id/terrain/:z/:x/:y', async (c) => {
    const id = await projectIdOf(c, ctx);
    const t = tileAddress(c, 'a terrain tile');
    const png = (await cachedTerrainTiles(ctx, terrainTiles, id)).tile(t.z, t.x, t.y);
    return pngTile(c, png, t, 'terrain tile', `the terrain or zoom ${TERRAIN_MIN_ZOOM}–${TERRAIN_MAX_ZOOM}`, 'no-cache');
  });
}

/** A project's runs: listed, started (edit token) and checked before starting. */
function projectRunRoutes(app: Hono, ctx: AppContext): void {
  app.get('/api/projects/:id/runs', async (c) => {
    const id = await projectIdOf(c, ctx);
    const runs = (await ctx.store.listProjectRuns(id)).map((r) => {
      const live = ctx.jobs.live(r.id);
      return { ...r, status: live?.status ?? r.status, url: `/api/runs/${r.id}` };
    });
    return c.json({ id, runs }, 200, { 'cache-control': 'no-store' });
  });

  app.post('/api/projects/:id/runs', async (c) => {
    const id = await projectIdOf(c, ctx);
    await requireEditToken(c, ctx, id);
    requireJsonType(c);
    const out = await submitRun(ctx, await jsonBody(c), clientAddress(c, ctx.trustedProxies), id);
    return c.json(out.body, out.status);
  });

  // The checks a run makes before it starts, without starting it: what is missing, and data sets far apart.
  app.post('/api/projects/:id/runs/check', async (c) => {
    const id = await projectIdOf(c, ctx);
    requireJsonType(c);
    const body = await jsonBody(c);
    requireRunInputs(body);
    const request = parseWith(runRequestSchema, body, 'run request', 'invalid_run');
    const { names, bboxes } = await resolveRunDatasets(ctx, request, id);
    const warnings = farApartWarnings(bboxes);
    return c.json({ ok: true, datasets: names, warnings });
  });
}
