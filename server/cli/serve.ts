import { parseVerbArgs, numberOption, textOptions } from './args.ts';
import { InputError } from '../../shared/errors.ts';
import { startServer } from '../main.ts';
import { join } from 'node:path';

/**
 * Where the data lives: a PostgreSQL URL (--database-url, else SUBTHERM_DATABASE_URL) wins over the SQLite file
 * (--db, else SUBTHERM_DB); a URL and --db both given name two stores, which is refused (exit 2).
 */
export function resolveDatabase(values: { db?: string; 'database-url'?: string }): { dbPath: string; databaseUrl?: string } {
  const url = values['database-url'] ?? (process.env.SUBTHERM_DATABASE_URL || undefined);
  if (url !== undefined && values.db !== undefined) {
    throw new InputError(
      `both a PostgreSQL database (${values['database-url'] !== undefined ? '--database-url' : 'SUBTHERM_DATABASE_URL'}) and a SQLite file (--db ${values.db}) were given: they are two different stores; give one`,
      [{ field: 'db', problem: 'given with a database URL' }],
      'conflicting_options',
    );
  }
  const dbPath = values.db ?? process.env.SUBTHERM_DB ?? join(process.cwd(), 'data', 'subtherm.sqlite');
  return url !== undefined ? { dbPath, databaseUrl: url } : { dbPath };
}

/** `subtherm serve [--port 8080] [--db data/subtherm.sqlite | --database-url postgres://…]`; flags override the environment. */
export async function serve(argv: string[]): Promise<number> {
  const { values } = parseVerbArgs('serve', argv, {
    ...textOptions('port db database-url host public-url queue-url'),
  });
  if (values.help) {
    process.stdout.write(
      [
        'subtherm serve [--port 8080] [--db data/subtherm.sqlite | --database-url postgres://user@host/db] [--queue-url redis://host:6379]',
        '               [--host 127.0.0.1] [--public-url https://host/path]',
        '  PORT, SUBTHERM_DB, SUBTHERM_DATABASE_URL, SUBTHERM_QUEUE_URL, SUBTHERM_HOST and SUBTHERM_PUBLIC_URL set the defaults; flags win.',
        '  A database URL (PostgreSQL, for several servers) is used instead of the SQLite file; giving both is an error.',
        "  A queue URL (Redis) sends runs to `subtherm worker` processes instead of this server's threads; it needs a database URL.",
        '  --host 127.0.0.1 (the default) serves this machine only; --host 0.0.0.0 serves the network: view and edit',
        '  links are the only access control, so do that on a trusted network or behind a proxy with its own login.',
        '',
      ].join('\n'),
    );
    return 0;
  }
  const port = numberOption('port', values.port ?? process.env.PORT, 8080);
  if (!Number.isInteger(port) || port < 0 || port > 65535)
    throw new InputError(`--port must be an integer 0–65535, got ${port}`, [{ field: 'port', problem: 'out of range' }], 'bad_option');
  const { dbPath, databaseUrl } = resolveDatabase(values);
  const host = values.host ?? process.env.SUBTHERM_HOST ?? '127.0.0.1';
  const queueUrl = values['queue-url'] ?? (process.env.SUBTHERM_QUEUE_URL || undefined);
  const srv = await startServer({ port, dbPath, databaseUrl, host, publicBaseUrl: values['public-url'], buildClient: true, queueUrl });
  const stop = () => {
    // Cancel queued and running runs (their worker threads stop; queue runs go on on the workers), then close the
    // listener and the database.
    void srv.close().then(() => process.exit(0));
  };
  process.once('SIGINT', stop);
  process.once('SIGTERM', stop);
  await new Promise(() => {}); // serve until stopped
  return 0;
}
