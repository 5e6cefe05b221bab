/**
 * The SQLite writer thread: large writes (a 50 MB data set body) run on a worker thread with its own connection to
 * the store's file, so that neither their pages nor their fsync (`synchronous = FULL`: seconds on a busy disk) hold
 * the request thread. The file is in WAL mode, so the request thread's connection reads on meanwhile and sees the
 * row once the writer has committed. Byte parameters move to the thread (no copy) and are stored there as text.
 *
 * While the writer holds the file's write lock, a write on the request thread's connection would wait for it inside
 * SQLite, synchronously (busy_timeout), freezing every request. So the store asks `idle()` before each of its own
 * writes: the returned promise settles (without holding the thread) once no large write is in progress, and the
 * writer starts its next large write only after the writes that waited have run. One thread, one write at a time.
 * A failure comes back with SQLite's code (SQLITE_FULL still answers 507).
 */
import { createRequire } from 'node:module';
import { Worker } from 'node:worker_threads';

/** Bodies of at least this many characters or bytes are written off the request thread (a few MB take milliseconds inline). */
export const OFF_THREAD_WRITE_CHARS = 4 * 1024 * 1024;

const BETTER_SQLITE3 = createRequire(import.meta.url).resolve('better-sqlite3');

// Plain CommonJS for an eval worker (no TypeScript loader needed); better-sqlite3 is found by its resolved path.
const WORKER_SOURCE = `
const { workerData, parentPort } = require('node:worker_threads');
const Database = require(workerData.module);
const db = new Database(workerData.path);
db.pragma('busy_timeout = 5000');
db.pragma('synchronous = FULL');
db.pragma('foreign_keys = ON');
const utf8 = new TextDecoder();
parentPort.on('message', (m) => {
  try {
    const params = m.params.map((p) => (p instanceof Uint8Array ? utf8.decode(p) : p));
    parentPort.postMessage({ ok: true, changes: db.prepare(m.sql).run(...params).changes });
  } catch (e) {
    parentPort.postMessage({ ok: false, code: e && e.code, message: e && e.message ? e.message : String(e) });
  }
});
`;

interface Write {
  sql: string;
  params: unknown[];
  resolve: (changes: number) => void;
  reject: (e: Error) => void;
}

/** True when a parameter is large enough to be written off the request thread. */
export function isLargeParam(p: unknown): boolean {
  return (typeof p === 'string' && p.length >= OFF_THREAD_WRITE_CHARS) || (p instanceof Uint8Array && p.byteLength >= OFF_THREAD_WRITE_CHARS);
}

export class SqliteWriter {
  private worker: Worker | null = null;
  private current: Write | null = null;
  private readonly queue: Write[] = [];
  private waiting: (() => void)[] = [];

  constructor(private readonly path: string) {}

  /**
   * Runs one write statement on the writer thread, after those queued before it; resolves to the rows changed.
   * A Uint8Array parameter spanning its whole buffer is moved to the thread: it is unusable here afterwards.
   */
  write(sql: string, params: unknown[]): Promise<number> {
    return new Promise((resolve, reject) => {
      this.queue.push({ sql, params, resolve, reject });
      if (this.current === null) this.next();
    });
  }

  /** True while a large write is in progress. */
  get busy(): boolean {
    return this.current !== null;
  }

  /** Settles once no large write is in progress (at once when none is). */
  idle(): Promise<void> {
    if (this.current === null) return Promise.resolve();
    return new Promise((resolve) => this.waiting.push(resolve));
  }

  /** Waits for the writes in progress and queued, then stops the thread. */
  async close(): Promise<void> {
    while (this.current !== null || this.queue.length > 0) await this.idle();
    await this.worker?.terminate();
    this.worker = null;
  }

  private thread(): Worker {
    if (this.worker) return this.worker;
    const w = new Worker(WORKER_SOURCE, { eval: true, execArgv: [], workerData: { module: BETTER_SQLITE3, path: this.path } });
    w.on('message', (m: { ok: boolean; changes?: number; code?: string; message?: string }) => {
      if (m.ok) this.settle(null, m.changes ?? 0);
      else this.settle(Object.assign(new Error(m.message ?? 'SQLite write failed'), { code: m.code }), 0);
    });
    w.on('error', (e) => this.lost(e));
    w.on('exit', (code) => this.lost(new Error(`the SQLite writer thread exited with code ${code}`)));
    this.worker = w;
    return w;
  }

  /** The thread failed (it could not open the file, or died): the write in progress fails; the next starts a new thread. */
  private lost(e: Error): void {
    if (this.worker === null) return;
    this.worker = null;
    if (this.current !== null) this.settle(e, 0);
  }

  private settle(error: Error | null, changes: number): void {
    const done = this.current;
    this.current = null;
    this.worker?.unref();
    if (done !== null) {
      if (error) done.reject(error);
      else done.resolve(changes);
    }
    // The writes that waited run first (their promises settle now, their statements in the microtasks that
    // follow); the next large write starts after them.
    const waiting = this.waiting;
    this.waiting = [];
    for (const go of waiting) go();
    setImmediate(() => {
      if (this.current === null) this.next();
    });
  }

  private next(): void {
    const w = this.queue.shift();
    if (w === undefined) return;
    this.current = w;
    const buffers = new Set<ArrayBuffer>();
    for (const p of w.params)
      if (p instanceof Uint8Array && p.byteOffset === 0 && p.byteLength === p.buffer.byteLength && p.buffer instanceof ArrayBuffer) buffers.add(p.buffer);
    const t = this.thread();
    t.ref();
    t.postMessage({ sql: w.sql, params: w.params }, [...buffers]);
  }
}
