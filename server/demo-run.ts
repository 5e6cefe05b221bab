/**
 * The demo opens finished: on start the demo project's default run is submitted in the background (a finished run
 * with the same inputs is found again, not recomputed) and the project's state points at it, so the first page can
 * show its layers, or its progress until then.
 */
import { DEMO_PROJECT_ID, DEMO_RUN_REQUEST } from './demo.ts';
import type { AppContext } from './routes/context.ts';
import { submitRun } from './routes/runs.ts';

/** Submits the demo run and records its id in the demo project's state (a new revision when it changed). */
export async function startDemoRun(ctx: AppContext, log: (line: string) => void = (l) => process.stderr.write(l + '\n')): Promise<string | null> {
  try {
    const out = await submitRun(ctx, structuredClone(DEMO_RUN_REQUEST), 'demo', DEMO_PROJECT_ID);
    const id = out.body.id as string;
    const project = await ctx.store.getProject(DEMO_PROJECT_ID);
    const state = (project?.state ?? {}) as Record<string, unknown>;
    if (project && state.runId !== id) await ctx.store.appendRevision(DEMO_PROJECT_ID, { stateJson: JSON.stringify({ ...state, runId: id }) });
    return id;
  } catch (e) {
    log(`[${new Date().toISOString()}] the demo run could not start: ${e instanceof Error ? e.message : String(e)}`);
    return null;
  }
}
