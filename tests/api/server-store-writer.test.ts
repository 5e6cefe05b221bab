// The SQLite store's writer thread and the request thread's own writes. A large data set body is written on the
// writer thread; while it holds the file's write lock, a small save from the request thread must wait for it
// without holding the event loop longer than the 250 ms responsiveness goal (SQLite's busy_timeout would wait
// synchronously, freezing every request), and must then succeed. Bodies given as UTF-8 bytes are stored as text, inline or off the thread. A store made before
// data set bodies moved to their row's last column is migrated with its rows and references intact.
import { afterEach, describe, expect, it } from 'vitest';
import Database from 'better-sqlite3';
import { existsSync, mkdirSync, mkdtempSync, rmSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { MIGRATIONS } from '../../server/store/sqlite-schema.ts';
import { OFF_THREAD_WRITE_CHARS } from '../../server/store/sqlite-offthread.ts';

const ROOT = new URL('../..', import.meta.url).pathname;
const dirs: string[] = [];
function tempDb(): string {
  mkdirSync(join(ROOT, '.tmp'), { recursive: true });
  const dir = mkdtempSync(join(ROOT, '.tmp', 'store-writer-'));
  dirs.push(dir);
  return join(dir, 'db.sqlite');
}
afterEach(() => {
  for (const d of dirs.splice(0)) rmSync(d, { recursive: true, force: true });
});

/** A FeatureCollection of `n` invented points, as text. */
function sitesText(n: number, note = ''): string {
  const f = Array.from(
    { length: n },
    (_, i) =>
      `{"type":"Feature","geometry":{"type":"Point","coordinates":[${(-128 + (i % 1000) / 1000).toFixed(4)},-38.5]},"properties":{"id":"W-${i}","heatFlowMWm2":60,"name":"${note}${i}"}}`,
  );
  return `{"type":"FeatureCollection","features":[${f.join(',')}]}`;
}

/** Largest gap between ticks of a 10 ms timer while `work` runs: how long the event loop was held. */
async function loopHeld<T>(work: () => Promise<T>): Promise<{ value: T; maxGapMs: number }> {
  let last = performance.now();
  let maxGapMs = 0;
  const timer = setInterval(() => {
    const now = performance.now();
    maxGapMs = Math.max(maxGapMs, now - last - 10);
    last = now;
  }, 10);
  try {
    const value = await work();
    // A hold at the very end (or one covering the whole of `work`) has had no tick after it yet.
    return { value, maxGapMs: Math.max(maxGapMs, performance.now() - last - 10) };
  } finally {
    clearInterval(timer);
  }
}

describe('SQLite writer thread', () => {
  it('a save from the request thread waits for a large write in progress without holding the event loop, then succeeds', async () => {
    const path = tempDb();
    const store = new SqliteStore(path);
    const project = await store.createProject({ id: 'p1', title: 'writer', stateJson: '{"v":1}', tokenHash: 'x' });
    expect(project.revision).toBe(1);
    const note = 'invented site written while the project is saved, '.repeat(4);
    const text = sitesText(150_000, note);
    expect(text.length).toBeGreaterThan(6 * OFF_THREAD_WRITE_CHARS);
    const bytes = new TextEncoder().encode(text);
    const size = bytes.byteLength; // the bytes move to the writer thread: unusable here afterwards
    const wal = `${path}-wal`;
    const walBefore = existsSync(wal) ? statSync(wal).size : 0;
    const t0 = performance.now();
    const large = store.putDataset({ kind: 'sites', body: bytes, featureCount: 150_000 });
    // Wait until the writer thread is inside its transaction: its pages are reaching the WAL file.
    while (!existsSync(wal) || statSync(wal).size < walBefore + 4 * 1048576) {
      await new Promise((r) => setTimeout(r, 2));
      if (performance.now() - t0 > 120_000) throw new Error('the writer thread wrote nothing in 120 s');
    }
    const tSave = performance.now();
    const { value: revision, maxGapMs } = await loopHeld(() => store.appendRevision('p1', { stateJson: '{"v":2}' }));
    const saveMs = performance.now() - tSave;
    const rec = await large;
    const writeMs = performance.now() - t0;
    console.log(
      `large write ${(size / 1048576).toFixed(1)} MB on the writer thread: ${writeMs.toFixed(0)} ms; save issued during it answered after ${saveMs.toFixed(0)} ms, event loop held at most ${maxGapMs.toFixed(1)} ms`,
    );
    expect(revision).toBe(2);
    expect((await store.getProject('p1'))!.state).toEqual({ v: 2 });
    expect(rec.bytes).toBe(size);
    expect(bytes.byteLength).toBe(0);
    // Waiting inside SQLite would hold the loop for the rest of the large write (the save waited saveMs for it).
    expect(maxGapMs).toBeLessThan(Math.max(250, saveMs / 2));
    // And the hold stays within the server's responsiveness goal of 250 ms (the bench's worst-probe goal). Six runs
    // at load 18–22 on 2 cores held it 32–169 ms while the save waited 1.2–1.8 s.
    expect(maxGapMs).toBeLessThanOrEqual(250);
    expect((await store.getDataset(rec.id))!.body).toBe(text);
    await store.close();
  }, 300_000);

  it('stores a body given as UTF-8 bytes as text, inline and on the writer thread', async () => {
    const store = new SqliteStore(tempDb());
    const small = sitesText(3, 'Ünïcode ');
    const large = sitesText(60_000, 'ünïcode site with a long invented description, '.repeat(2));
    expect(large.length).toBeGreaterThan(OFF_THREAD_WRITE_CHARS);
    for (const text of [small, large]) {
      const rec = await store.putDataset({ kind: 'sites', body: new TextEncoder().encode(text), featureCount: 1 });
      expect(rec.bytes).toBe(Buffer.byteLength(text, 'utf8'));
      const row = store.db.prepare('SELECT typeof(body) AS t, body FROM datasets WHERE id = ?').get(rec.id) as { t: string; body: string };
      expect(row.t).toBe('text');
      expect(row.body).toBe(text);
    }
    await store.close();
  }, 120_000);
});

describe('data set bodies in the last column', () => {
  it('migrates a store whose bodies came before created_at and bbox, keeping rows and references', async () => {
    const path = tempDb();
    const before = MIGRATIONS.findIndex((m) => m.includes('datasets_rebuilt'));
    expect(before).toBeGreaterThan(0);
    const db = new Database(path);
    for (let v = 0; v < before; v++) db.exec(MIGRATIONS[v]);
    db.pragma(`user_version = ${before}`);
    db.pragma('foreign_keys = ON');
    const body = sitesText(2);
    db.prepare('INSERT INTO datasets (id, kind, feature_count, content_hash, title, body, created_at, bbox) VALUES (?, ?, ?, ?, ?, ?, ?, ?)').run(
      'ds1',
      'sites',
      2,
      'h1',
      'Sites',
      body,
      '2026-01-01T00:00:00.000Z',
      '[-128,-38.5,-127.999,-38.5]',
    );
    db.prepare('INSERT INTO projects (id, token_hash, created_at) VALUES (?, ?, ?)').run('p1', 'x', '2026-01-01T00:00:00.000Z');
    db.prepare('INSERT INTO project_datasets (project_id, dataset_id, name, attached_at) VALUES (?, ?, ?, ?)').run(
      'p1',
      'ds1',
      'Sites',
      '2026-01-01T00:00:00.000Z',
    );
    db.close();

    const store = new SqliteStore(path);
    const cols = (store.db.prepare('PRAGMA table_info(datasets)').all() as { name: string }[]).map((c) => c.name);
    expect(cols.at(-1)).toBe('body');
    expect(store.db.pragma('foreign_keys', { simple: true })).toBe(1);
    expect(store.db.pragma('foreign_key_check')).toEqual([]);
    const held = await store.getProjectDataset('p1', 'ds1');
    expect(held).toMatchObject({ id: 'ds1', name: 'Sites', contentHash: 'h1', bbox: [-128, -38.5, -127.999, -38.5], bytes: body.length });
    expect((await store.getDataset('ds1'))!.body).toBe(body);
    // The foreign key from project_datasets still names the rebuilt table: a row for a missing data set is refused.
    expect(() =>
      store.db.prepare('INSERT INTO project_datasets (project_id, dataset_id, name, attached_at) VALUES (?, ?, ?, ?)').run('p1', 'nope', 'x', 'now'),
    ).toThrow(/FOREIGN KEY/);
    await store.close();
  });
});
