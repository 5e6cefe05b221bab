/**
 * Shared map states. POST creates a project and returns its edit token once; the token is kept only as a SHA-256
 * hash. Links: view `/p/ID`, edit `/p/ID#edit=TOKEN` (the token rides in the URL fragment, which browsers never
 * send to a server or put in a Referer). Every save appends a revision; none overwrites another.
 */
import type { Context, Hono } from 'hono';
import { InputError } from '../../shared/errors.ts';
import { bearerToken, hashToken, newEditToken, tokenMatches } from '../security.ts';
import { newId } from '../store/sqlite.ts';
import { jsonBody, notFound, requireJsonType, singleQuery, type AppContext } from './context.ts';
import { idSchema, jsonDepthExceeds, parseWith, projectCreateSchema, projectUpdateSchema, revisionQuerySchema } from './schemas.ts';

/** The project id of the path (404 when there is no such project). */
export async function projectIdOf(c: Context, ctx: AppContext): Promise<string> {
  const raw = c.req.param('id') ?? '';
  const id = idSchema.safeParse(raw);
  if (!id.success || (await ctx.store.getProjectTokenHash(id.data)) === null) throw notFound('project', raw, 'project_not_found');
  return id.data;
}

/** Requires the project's edit token (401 without one, 403 with another project's or a wrong one). */
export async function requireEditToken(c: Context, ctx: AppContext, id: string): Promise<void> {
  const token = bearerToken(c.req.header('authorization'));
  if (token === null) {
    c.header('www-authenticate', 'Bearer realm="subtherm project"');
    throw new InputError(
      'changing a project needs its edit token: Authorization: Bearer <editToken> (from the edit link)',
      [{ field: 'authorization', problem: 'missing' }],
      'unauthorized',
    );
  }
  if (!tokenMatches(token, (await ctx.store.getProjectTokenHash(id))!)) {
    throw new InputError('this token cannot edit this project (a view link is read-only)', [{ field: 'authorization', problem: 'wrong token' }], 'forbidden');
  }
}

export function projectRoutes(app: Hono, ctx: AppContext): void {
  const stateJson = (state: Record<string, unknown>): string => {
    if (jsonDepthExceeds(state, ctx.limits.maxJsonDepth)) {
      throw new InputError(
        `the state is nested deeper than ${ctx.limits.maxJsonDepth} levels (limit maxJsonDepth)`,
        [{ field: 'state', problem: `at most ${ctx.limits.maxJsonDepth} levels of nesting (limit maxJsonDepth = ${ctx.limits.maxJsonDepth})` }],
        'state_too_deep',
      );
    }
    const text = JSON.stringify(state);
    const bytes = Buffer.byteLength(text, 'utf8');
    if (bytes > ctx.limits.maxProjectStateBytes) {
      throw new InputError(
        `the state is ${bytes} bytes (limit maxProjectStateBytes = ${ctx.limits.maxProjectStateBytes})`,
        [{ field: 'state', problem: `at most ${ctx.limits.maxProjectStateBytes} bytes of JSON (limit maxProjectStateBytes)` }],
        'state_too_large',
      );
    }
    return text;
  };
  const projectId = (c: Context): Promise<string> => projectIdOf(c, ctx);

  app.post('/api/projects', async (c) => {
    requireJsonType(c);
    const body = await jsonBody(c);
    const q = parseWith(projectCreateSchema, body, 'project', 'invalid_project');
    const token = newEditToken();
    const id = newId('');
    const rec = await ctx.store.createProject({ id, title: q.title, stateJson: stateJson(q.state), tokenHash: hashToken(token) });
    return c.json({ id, revision: rec.revision, editToken: token, viewUrl: `/p/${id}`, editUrl: `/p/${id}#edit=${token}` }, 201);
  });

  app.get('/api/projects/:id', async (c) => {
    const id = await projectId(c);
    const { revision } = parseWith(revisionQuerySchema, singleQuery(c), 'query', 'bad_query');
    const rec = await ctx.store.getProject(id, revision);
    if (!rec) throw new InputError(`project ${id} has no revision ${revision}`, [{ field: 'revision', problem: 'not found' }], 'revision_not_found');
    return c.json({ id: rec.id, title: rec.title, state: rec.state, revision: rec.revision, updatedAt: rec.updatedAt, createdAt: rec.createdAt }, 200, {
      'cache-control': 'no-store',
    });
  });

  app.get('/api/projects/:id/revisions', async (c) => {
    const id = await projectId(c);
    return c.json({ id, revisions: (await ctx.store.listRevisions(id)) ?? [] }, 200, { 'cache-control': 'no-store' });
  });

  app.put('/api/projects/:id', async (c) => {
    const id = await projectId(c);
    await requireEditToken(c, ctx, id);
    requireJsonType(c);
    const body = await jsonBody(c);
    const q = parseWith(projectUpdateSchema, body, 'project', 'invalid_project');
    const revision = await ctx.store.appendRevision(id, { title: q.title, stateJson: stateJson(q.state) });
    return c.json({ id, revision });
  });
}
