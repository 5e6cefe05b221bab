// The stores a server test runs against: the SQLite file and PostgreSQL (a throwaway cluster; without PostgreSQL
// installed the test fails with the install line, and bash .ci/run installs it). Tests take the list with describe.each, so one test body checks both.
import { mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import pg from 'pg';
import Database from 'better-sqlite3';
import { SqliteStore } from '../../server/store/sqlite.ts';
import { PostgresStore } from '../../server/store/postgres.ts';
import type { Store } from '../../server/store/types.ts';
import { startPgCluster } from './pg-cluster.ts';

const ROOT = new URL('../..', import.meta.url).pathname;

export interface TestDatabase {
  /** What `startServerProcess` takes to serve this database: a SQLite file path or a PostgreSQL URL. */
  server: { dbPath: string } | { databaseUrl: string };
  /** Opens a Store on the database (for in-process apps). */
  openStore(): Promise<Store>;
  /** Rows of a query run directly on the database (`?` placeholders), read-only. */
  query<T>(sql: string, params?: unknown[]): Promise<T[]>;
  /** The engine's own whole-file consistency check, where it has one (SQLite's integrity_check); true when fine. */
  intact?: () => Promise<boolean>;
  /** Stops the database and removes its files. */
  stop(): void;
}

function sqliteDatabase(): TestDatabase {
  const dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-db-'));
  const dbPath = join(dir, 'test.sqlite');
  const withDb = <T>(fn: (db: Database.Database) => T): T => {
    const db = new Database(dbPath, { readonly: true });
    try {
      return fn(db);
    } finally {
      db.close();
    }
  };
  return {
    server: { dbPath },
    openStore: async () => new SqliteStore(dbPath),
    query: async <T>(sql: string, params: unknown[] = []) => withDb((db) => db.prepare(sql).all(...params) as T[]),
    intact: async () => withDb((db) => db.pragma('integrity_check', { simple: true }) === 'ok'),
    stop: () => rmSync(dir, { recursive: true, force: true }),
  };
}

function postgresDatabase(): TestDatabase {
  const cluster = startPgCluster(ROOT);
  return {
    server: { databaseUrl: cluster.url },
    openStore: async () => PostgresStore.open(cluster.url, { max: 8 }),
    query: async <T>(sql: string, params: unknown[] = []) => {
      const client = new pg.Client({ connectionString: cluster.url });
      await client.connect();
      try {
        let n = 0;
        return (
          await client.query(
            sql.replace(/\?/g, () => `$${++n}`),
            params,
          )
        ).rows as T[];
      } finally {
        await client.end();
      }
    },
    stop: () => cluster.stop(),
  };
}

/** [name, start] pairs for describe.each: SQLite, then PostgreSQL (a missing PostgreSQL fails with its install line). */
export const TEST_DATABASES: [string, () => TestDatabase][] = [
  ['SQLite', sqliteDatabase],
  ['PostgreSQL', postgresDatabase],
];
