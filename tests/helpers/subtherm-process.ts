// A `subtherm` command (bin/subtherm.mjs) started as its own process for tests that need real processes (servers and
// queue workers that can be killed): resolves once a line of its output matches `ready`.
import { spawn, type ChildProcess } from 'node:child_process';
import { join } from 'node:path';

const ROOT = new URL('../..', import.meta.url).pathname;

export interface SubthermProcess {
  process: ChildProcess;
  /** The match of `ready` in the output. */
  match: RegExpExecArray;
  /** Everything printed so far (stdout and stderr). */
  output(): string;
  /** Sends `signal` (default SIGTERM) and resolves when the process has exited. */
  stop(signal?: NodeJS.Signals): Promise<void>;
}

export async function startSubtherm(args: string[], ready: RegExp, env: Record<string, string> = {}, timeoutMs = 120_000): Promise<SubthermProcess> {
  const child = spawn(process.execPath, [join(ROOT, 'bin', 'subtherm.mjs'), ...args], {
    cwd: ROOT,
    env: { ...process.env, SUBTHERM_DEMO_RUN: '0', ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let log = '';
  const match = await new Promise<RegExpExecArray>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`subtherm ${args[0]} did not start in ${timeoutMs} ms:\n${log}`)), timeoutMs);
    const onData = (d: Buffer) => {
      log += d.toString();
      const m = ready.exec(log);
      if (m) {
        clearTimeout(timer);
        resolve(m);
      }
    };
    child.stdout.on('data', onData);
    child.stderr.on('data', onData);
    child.on('exit', (code, signal) => {
      clearTimeout(timer);
      reject(new Error(`subtherm ${args[0]} exited (${code ?? signal}):\n${log}`));
    });
  });
  return {
    process: child,
    match,
    output: () => log,
    stop: (signal: NodeJS.Signals = 'SIGTERM') =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null || child.signalCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill(signal);
      }),
  };
}
