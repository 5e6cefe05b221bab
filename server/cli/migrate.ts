import { parseVerbArgs } from './args.ts';
import { resolveDatabase } from './serve.ts';
import { SqliteStore } from '../store/sqlite.ts';
import { PostgresStore, migratePostgres } from '../store/postgres.ts';
import { redactUrl } from '../security.ts';
import { InputError } from '../../shared/errors.ts';

/**
 * `subtherm migrate [--database-url postgres://… | --db PATH]`: brings the database's schema up to date and exits
 * (the server does the same at start; run this first when several servers share one PostgreSQL database).
 */
export async function migrate(argv: string[]): Promise<number> {
  const { values } = parseVerbArgs('migrate', argv, { db: { type: 'string' }, 'database-url': { type: 'string' } });
  if (values.help) {
    process.stdout.write(
      [
        'subtherm migrate [--database-url postgres://user@host/db | --db data/subtherm.sqlite]',
        '  Creates or updates the schema (versioned migrations; the table subtherm_migrations records which ran) and exits.',
        '  SUBTHERM_DATABASE_URL and SUBTHERM_DB set the defaults; flags win; giving both a URL and --db is an error.',
        '',
      ].join('\n'),
    );
    return 0;
  }
  const { dbPath, databaseUrl } = resolveDatabase(values);
  if (databaseUrl === undefined) {
    // The SQLite file is migrated when it is opened.
    const store = new SqliteStore(dbPath);
    const version = store.db.pragma('user_version', { simple: true }) as number;
    await store.close();
    process.stdout.write(`${dbPath}: schema version ${version}\n`);
    return 0;
  }
  let store: PostgresStore;
  try {
    store = await PostgresStore.open(databaseUrl, { max: 1, log: (l) => process.stdout.write(l + '\n') });
  } catch (e) {
    throw new InputError(
      `cannot migrate ${redactUrl(databaseUrl)}: ${(e as Error).message}`,
      [{ field: 'database-url', problem: (e as Error).message }],
      'database_unavailable',
    );
  }
  try {
    await migratePostgres(store.pool);
    const rows = (await store.pool.query<{ version: number }>('SELECT max(version) AS version FROM subtherm_migrations')).rows;
    process.stdout.write(`${redactUrl(databaseUrl)}: schema version ${rows[0]?.version ?? 0}\n`);
  } finally {
    await store.close();
  }
  return 0;
}
