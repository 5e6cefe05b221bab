// A throwaway Redis server for tests: Debian's redis-server started on a random loopback port with its working folder
// (no snapshots, no append-only file) under the checkout's .tmp/, stopped and its folder removed by stop().
import { execFileSync, spawn } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { createConnection } from 'node:net';
import { join } from 'node:path';

export interface RedisServer {
  /** redis://127.0.0.1:PORT */
  url: string;
  port: number;
  stop(): Promise<void>;
}

/** True when redis-server is installed here (Debian package `redis-server`). */
export function redisAvailable(): boolean {
  try {
    execFileSync('redis-server', ['--version'], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}

/** Resolves when a PING on `port` is answered with +PONG; rejects after `timeoutMs`. */
async function waitForPong(port: number, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const ok = await new Promise<boolean>((resolve) => {
      const s = createConnection({ host: '127.0.0.1', port }, () => s.write('PING\r\n'));
      s.once('data', (d) => {
        s.destroy();
        resolve(d.toString().startsWith('+PONG'));
      });
      s.once('error', () => resolve(false));
    });
    if (ok) return;
    if (Date.now() > deadline) throw new Error(`redis-server on port ${port} did not answer PING in ${timeoutMs} ms`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

export async function startRedisServer(rootDir: string): Promise<RedisServer> {
  if (!redisAvailable())
    throw new Error(
      'redis-server, which this test starts on a loopback port, is not installed. Install it with apt-get install -y redis-server (bash .ci/run does).',
    );
  mkdirSync(join(rootDir, '.tmp'), { recursive: true });
  const dir = mkdtempSync(join(rootDir, '.tmp', 'redis-'));
  const port = 20000 + Math.floor(Math.random() * 40000);
  const child = spawn(
    'redis-server',
    ['--port', String(port), '--bind', '127.0.0.1', '--dir', dir, '--save', '', '--appendonly', 'no', '--daemonize', 'no', '--loglevel', 'warning'],
    { stdio: ['ignore', 'ignore', 'pipe'] },
  );
  let stderr = '';
  child.stderr.on('data', (d: Buffer) => (stderr += d.toString()));
  try {
    await waitForPong(port, 15_000);
  } catch (e) {
    child.kill('SIGKILL');
    rmSync(dir, { recursive: true, force: true });
    throw new Error(`${(e as Error).message}\n${stderr}`, { cause: e });
  }
  let stopped = false;
  return {
    url: `redis://127.0.0.1:${port}`,
    port,
    async stop() {
      if (stopped) return;
      stopped = true;
      if (child.exitCode === null && child.signalCode === null) {
        await new Promise<void>((resolve) => {
          child.once('exit', () => resolve());
          child.kill('SIGTERM');
        });
      }
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
