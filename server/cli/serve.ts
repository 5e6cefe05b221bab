import { parseVerbArgs, numberOption } from './args.ts';
import { InputError } from '../../shared/errors.ts';
import { startServer } from '../main.ts';
import { join } from 'node:path';

/** `subtherm serve [--port 8080] [--db data/subtherm.sqlite]`; flags override PORT and SUBTHERM_DB. */
export async function serve(argv: string[]): Promise<number> {
  const { values } = parseVerbArgs('serve', argv, {
    port: { type: 'string' },
    db: { type: 'string' },
    host: { type: 'string' },
    'public-url': { type: 'string' },
  });
  if (values.help) {
    process.stdout.write(
      [
        'subtherm serve [--port 8080] [--db data/subtherm.sqlite] [--host 127.0.0.1] [--public-url https://host/path]',
        '  PORT, SUBTHERM_DB, SUBTHERM_HOST and SUBTHERM_PUBLIC_URL set the defaults; flags win.',
        '  --host 127.0.0.1 (the default) serves this machine only; --host 0.0.0.0 serves the network: view and edit',
        '  links are the only access control, so do that on a trusted network or behind a proxy with its own login.',
        '',
      ].join('\n'),
    );
    return 0;
  }
  const port = numberOption('port', values.port ?? process.env.PORT, 8080);
  if (!Number.isInteger(port) || port < 0 || port > 65535) throw new InputError(`--port must be an integer 0–65535, got ${port}`, [{ field: 'port', problem: 'out of range' }], 'bad_option');
  const dbPath = values.db ?? process.env.SUBTHERM_DB ?? join(process.cwd(), 'data', 'subtherm.sqlite');
  const host = values.host ?? process.env.SUBTHERM_HOST ?? '127.0.0.1';
  const srv = await startServer({ port, dbPath, host, publicBaseUrl: values['public-url'], buildClient: true });
  const stop = () => {
    // Cancel queued and running runs (their worker threads stop), then close the listener and the database.
    void srv
      .close()
      .then(() => process.exit(0));
  };
  process.once('SIGINT', stop);
  process.once('SIGTERM', stop);
  await new Promise(() => {}); // serve until stopped
  return 0;
}
