/**
 * One SQLite statement run on a worker thread with its own connection to the store's file, for writes large
 * enough that doing them on the request thread would hold it: better-sqlite3 is synchronous, and the store commits
 * with `synchronous = FULL`, so a 50 MB data set body costs its conversion, its pages and an fsync of them (seconds
 * on a busy disk). The file is in WAL mode, so the request thread's connection reads on meanwhile and sees the row
 * once the worker has committed. A failure comes back with SQLite's code (SQLITE_FULL still answers 507).
 */
import { createRequire } from 'node:module';
import { Worker } from 'node:worker_threads';

/** Bodies of at least this many characters are written off the request thread (a few MB take milliseconds inline). */
export const OFF_THREAD_WRITE_CHARS = 4 * 1024 * 1024;

const BETTER_SQLITE3 = createRequire(import.meta.url).resolve('better-sqlite3');

// Plain CommonJS for an eval worker (no TypeScript loader needed); better-sqlite3 is found by its resolved path.
const WORKER_SOURCE = `
const { workerData, parentPort } = require('node:worker_threads');
const Database = require(workerData.module);
let db;
try {
  db = new Database(workerData.path);
  db.pragma('busy_timeout = 5000');
  db.pragma('synchronous = FULL');
  db.pragma('foreign_keys = ON');
  db.prepare(workerData.sql).run(...workerData.params);
  parentPort.postMessage({ ok: true });
} catch (e) {
  parentPort.postMessage({ ok: false, code: e && e.code, message: e && e.message ? e.message : String(e) });
} finally {
  if (db) db.close();
}
`;

/** Runs one write statement against the SQLite file at `path` on a worker thread; rejects with SQLite's error. */
export function runOffThread(path: string, sql: string, params: unknown[]): Promise<void> {
  return new Promise((resolve, reject) => {
    const w = new Worker(WORKER_SOURCE, { eval: true, execArgv: [], workerData: { module: BETTER_SQLITE3, path, sql, params } });
    let settled = false;
    w.once('message', (m: { ok: boolean; code?: string; message?: string }) => {
      settled = true;
      if (m.ok) resolve();
      else reject(Object.assign(new Error(m.message ?? 'SQLite write failed'), { code: m.code }));
    });
    w.once('error', (e) => {
      settled = true;
      reject(e);
    });
    w.once('exit', (code) => {
      if (!settled) reject(new Error(`the SQLite writer thread exited with code ${code}`));
    });
  });
}
