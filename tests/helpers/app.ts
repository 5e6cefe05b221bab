// In-process server for API tests: a fresh SQLite file with the demo loaded, the app (with its run worker pool),
// JSON posting, and a wait for a run to end.
import { mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { createApp, type AppOptions } from '../../server/app.ts';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { loadDemo } from '../../server/demo.ts';

export interface TestApp {
  app: ReturnType<typeof createApp>;
  store: SqliteStore;
  post(path: string, body: unknown): Promise<Response>;
  /** Polls GET /api/runs/:id until the run is done, failed or cancelled. */
  waitEnd<T = { status: string; progress: number; message: string; layers: { name: string; formats: string[]; urls: Record<string, string> }[] }>(
    id: string,
  ): Promise<T>;
  close(): Promise<void>;
}

export async function startTestApp(prefix: string, opts: Partial<AppOptions> = {}): Promise<TestApp> {
  const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), `subtherm-${prefix}-`));
  const store = new SqliteStore(join(dir, 'db.sqlite'));
  await loadDemo(store);
  const app = createApp({ store, terrain: null, clientDir: null, ...opts });
  await app.ready;
  const post = async (path: string, body: unknown): Promise<Response> =>
    app.request(path, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
  // Polls until the run ends, for up to 10 minutes of wall time (a busy machine may run a demo run for minutes; the
  // tests assert no wall time, and each test's own timeout still bounds the wait).
  const waitEnd = async <T>(id: string): Promise<T> => {
    for (const deadline = Date.now() + 600_000; Date.now() < deadline;) {
      const r = (await (await app.request(`/api/runs/${id}`)).json()) as { status: string };
      if (['done', 'failed', 'cancelled'].includes(r.status)) return r as T;
      await new Promise((res) => setTimeout(res, 20));
    }
    throw new Error(`run ${id} did not end`);
  };
  return {
    app,
    store,
    post,
    waitEnd,
    close: async () => {
      await app.close();
      await store.close();
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
