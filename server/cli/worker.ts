import { fileURLToPath } from 'node:url';
import { parseVerbArgs, numberOption, textOptions } from './args.ts';
import { InputError } from '../../shared/errors.ts';
import { PostgresStore } from '../store/postgres.ts';
import { redactUrl } from '../security.ts';
import { resolveLimits } from '../limits.ts';
import { QueueWorker } from '../queue/worker.ts';

/** The run worker module (the same one the server's own threads run). */
const RUN_WORKER_FILE = fileURLToPath(new URL('../workers/run-worker.ts', import.meta.url));

const HELP = [
  'subtherm worker [--concurrency 1] [--queue-url redis://host:6379] [--database-url postgres://user@host/db]',
  '  Takes runs from the Redis run queue that `subtherm serve --queue-url …` fills, runs them (one thread each, at most',
  '  --concurrency at once) and stores their results in the PostgreSQL database every server reads. Start one or many,',
  '  on one machine or several. SUBTHERM_QUEUE_URL, SUBTHERM_DATABASE_URL and SUBTHERM_RUN_CONCURRENCY set the defaults;',
  '  SUBTHERM_RUN_WALL_CLOCK_S limits one run. SIGTERM hands the runs it holds back to the queue; a worker that dies',
  '  leaves them to be started again by another worker (at most 3 starts in all, then the run fails with the reason).',
  '',
].join('\n');

/** `subtherm worker`: processes runs from the shared queue until stopped. */
export async function worker(argv: string[]): Promise<number> {
  const { values } = parseVerbArgs('worker', argv, {
    ...textOptions('concurrency queue-url database-url'),
  });
  if (values.help) {
    process.stdout.write(HELP);
    return 0;
  }
  const limits = resolveLimits();
  const concurrency = numberOption('concurrency', values.concurrency, limits.runConcurrency);
  if (!Number.isInteger(concurrency) || concurrency < 1 || concurrency > 256) {
    throw new InputError(
      `--concurrency must be an integer 1–256, got ${values.concurrency}`,
      [{ field: 'concurrency', problem: 'out of range' }],
      'bad_option',
    );
  }
  const queueUrl = values['queue-url'] ?? (process.env.SUBTHERM_QUEUE_URL || undefined);
  const databaseUrl = values['database-url'] ?? (process.env.SUBTHERM_DATABASE_URL || undefined);
  if (queueUrl === undefined || databaseUrl === undefined) {
    throw new InputError(
      'a worker needs the run queue (--queue-url or SUBTHERM_QUEUE_URL, redis://…) and the PostgreSQL database the servers use (--database-url or SUBTHERM_DATABASE_URL)',
      [{ field: queueUrl === undefined ? 'queue-url' : 'database-url', problem: 'missing' }],
      'missing_option',
    );
  }
  const log = (l: string) => process.stdout.write(l + '\n');
  let store: PostgresStore;
  try {
    store = await PostgresStore.open(databaseUrl, { max: Math.min(10, 2 + concurrency), log, queueOwnsRuns: true });
  } catch (e) {
    throw new InputError(
      `cannot use the database ${redactUrl(databaseUrl)}: ${(e as Error).message}`,
      [{ field: 'database-url', problem: (e as Error).message }],
      'database_unavailable',
    );
  }
  const w = new QueueWorker({ store, url: queueUrl, workerFile: RUN_WORKER_FILE, concurrency, wallClockMs: limits.runWallClockSeconds * 1000, log });
  try {
    await w.start();
  } catch (e) {
    await store.close();
    throw new InputError((e as Error).message, [{ field: 'queue-url', problem: (e as Error).message }], 'queue_unavailable');
  }
  log(`subtherm worker ${w.id} taking runs from ${redactUrl(queueUrl)} (${concurrency} at once; database ${redactUrl(databaseUrl)})`);
  const stop = () => {
    void w
      .stop()
      .then(() => store.close())
      .then(() => process.exit(0));
  };
  process.once('SIGINT', stop);
  process.once('SIGTERM', stop);
  await new Promise(() => {}); // work until stopped
  return 0;
}
