// One strict model reader (shared/products/model-input.ts) behind every way in: a model with one member the
// contract does not know gives the same problem code and the same field from the CLI, the HTTP API and a run.
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { InputError } from '../../shared/errors.ts';
import { runPipeline } from '../../server/runs/pipeline.ts';
import { startTestApp, type TestApp } from '../helpers/app.ts';

const root = new URL('../..', import.meta.url).pathname;
const demoModel = JSON.parse(readFileSync(join(root, 'fixtures/demo/model.json'), 'utf8')) as Record<string, unknown>;
/** The demo model with one unknown top-level member (a misspelling of surfaceHeatFlowMWm2). */
const BAD = { ...demoModel, surfaceHeatFlow: 70 };
const EXPECTED = { code: 'invalid_model', field: 'surfaceHeatFlow' };

let t: TestApp;
let dir: string;
beforeAll(async () => {
  t = await startTestApp('ways-in');
  mkdirSync(join(root, '.tmp'), { recursive: true });
  dir = mkdtempSync(join(root, '.tmp', 'ways-in-'));
});
afterAll(async () => {
  await t.close();
  rmSync(dir, { recursive: true, force: true });
});

async function apiError(res: Response): Promise<{ status: number; code: string; fields: string[] }> {
  const j = (await res.json()) as { error: { code: string; details: { field?: string }[] } };
  return { status: res.status, code: j.error.code, fields: j.error.details.map((d) => d.field ?? '') };
}

describe('an unknown model member is refused the same way everywhere', () => {
  it('CLI: geotherm exits 2 with code invalid_model naming the member', () => {
    const file = join(dir, 'bad-model.json');
    writeFileSync(file, JSON.stringify(BAD));
    const r = spawnSync(process.execPath, ['bin/subtherm.mjs', 'geotherm', '--model', file, '--json'], { cwd: root, encoding: 'utf8' });
    const j = JSON.parse(r.stdout) as { error: { code: string; details: { field?: string }[] } };
    expect({ status: r.status, code: j.error.code, fields: j.error.details.map((d) => d.field) }).toEqual({
      status: 2,
      code: EXPECTED.code,
      fields: [EXPECTED.field],
    });
    expect(r.stderr).toContain('surfaceHeatFlow');
  });

  it('API: uploading it, a column of it and a run of it answer 422 invalid_model naming the member', async () => {
    const upload = await t.post('/api/datasets?kind=model', BAD);
    const column = await t.post('/api/column', { model: BAD, heatFlowMWm2: 70 });
    const run = await t.post('/api/runs', { sites: 'demo-sites', model: BAD });
    for (const res of [upload, column, run]) expect(await apiError(res)).toEqual({ status: 422, code: EXPECTED.code, fields: [EXPECTED.field] });
  });

  it('a run: the pipeline refuses the inline model with the same InputError', async () => {
    const sites = (await t.store.getDataset('demo-sites'))!;
    let err: unknown;
    try {
      await runPipeline({ sites: 'demo-sites', model: BAD }, { 'demo-sites': { kind: sites.kind, body: sites.body } });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect({ code: (err as InputError).code, fields: (err as InputError).details.map((d) => d.field) }).toEqual({
      code: EXPECTED.code,
      fields: [EXPECTED.field],
    });
  });
});
