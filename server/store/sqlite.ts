import Database from 'better-sqlite3';
import { createHash, randomBytes } from 'node:crypto';
import { mkdirSync } from 'node:fs';
import { dirname } from 'node:path';
import type { DatasetRecord, Store } from './types.ts';

/** Schema migrations, applied in order; `PRAGMA user_version` records how many have run. */
const MIGRATIONS: string[] = [
  `CREATE TABLE datasets (
     id TEXT PRIMARY KEY,
     kind TEXT NOT NULL,
     feature_count INTEGER NOT NULL,
     content_hash TEXT NOT NULL,
     title TEXT,
     body TEXT NOT NULL,
     created_at TEXT NOT NULL
   );
   CREATE INDEX datasets_hash ON datasets(content_hash);`,
];

/** A new random id: 16 bytes from the CSPRNG, base64url (22 characters). */
export function newId(prefix = ''): string {
  return prefix + randomBytes(16).toString('base64url');
}

export function sha256Hex(text: string | Uint8Array): string {
  return createHash('sha256').update(text).digest('hex');
}

/** The embedded store: one SQLite file in WAL mode (better-sqlite3), created and migrated on open. */
export class SqliteStore implements Store {
  readonly db: Database.Database;

  constructor(path: string) {
    if (path !== ':memory:') mkdirSync(dirname(path), { recursive: true });
    this.db = new Database(path);
    this.db.pragma('journal_mode = WAL');
    this.db.pragma('synchronous = NORMAL');
    this.db.pragma('foreign_keys = ON');
    this.db.pragma('busy_timeout = 5000');
    this.migrate();
  }

  private migrate(): void {
    const version = this.db.pragma('user_version', { simple: true }) as number;
    for (let v = version; v < MIGRATIONS.length; v++) {
      this.db.transaction(() => {
        this.db.exec(MIGRATIONS[v]);
        this.db.pragma(`user_version = ${v + 1}`);
      })();
    }
  }

  putDataset(input: { id?: string; kind: string; body: string; featureCount: number; title?: string }): DatasetRecord {
    const contentHash = sha256Hex(input.body);
    if (input.id !== undefined) {
      const existing = this.getDataset(input.id);
      if (existing) return strip(existing);
    }
    const rec: DatasetRecord = {
      id: input.id ?? newId('ds_'),
      kind: input.kind,
      featureCount: input.featureCount,
      contentHash,
      createdAt: new Date().toISOString(),
      title: input.title ?? null,
    };
    this.db
      .prepare('INSERT INTO datasets (id, kind, feature_count, content_hash, title, body, created_at) VALUES (?, ?, ?, ?, ?, ?, ?)')
      .run(rec.id, rec.kind, rec.featureCount, rec.contentHash, rec.title, input.body, rec.createdAt);
    return rec;
  }

  getDataset(id: string): (DatasetRecord & { body: string }) | null {
    const row = this.db.prepare('SELECT id, kind, feature_count, content_hash, title, body, created_at FROM datasets WHERE id = ?').get(id) as
      | { id: string; kind: string; feature_count: number; content_hash: string; title: string | null; body: string; created_at: string }
      | undefined;
    if (!row) return null;
    return { id: row.id, kind: row.kind, featureCount: row.feature_count, contentHash: row.content_hash, title: row.title, body: row.body, createdAt: row.created_at };
  }

  listDatasets(): DatasetRecord[] {
    const rows = this.db.prepare('SELECT id, kind, feature_count, content_hash, title, created_at FROM datasets ORDER BY created_at, id').all() as {
      id: string; kind: string; feature_count: number; content_hash: string; title: string | null; created_at: string;
    }[];
    return rows.map((r) => ({ id: r.id, kind: r.kind, featureCount: r.feature_count, contentHash: r.content_hash, title: r.title, createdAt: r.created_at }));
  }

  close(): void {
    this.db.close();
  }
}

function strip(r: DatasetRecord & { body?: string }): DatasetRecord {
  const { body: _body, ...rest } = r;
  return rest;
}
