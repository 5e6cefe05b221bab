// Real-browser test support: Debian's chromium driven by playwright-core, and a real server process.
import { chromium, type Browser, type Page } from 'playwright-core';
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';

export const ROOT = new URL('../..', import.meta.url).pathname;
export const SCREENSHOT_DIR = join(ROOT, 'tests', 'screenshots');
export const CHROMIUM = process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';

/** Flags that give WebGL2 in software (SwiftShader through ANGLE) with no network chatter. */
export const CHROMIUM_ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--use-angle=swiftshader',
  '--enable-unsafe-swiftshader',
];

export function requireChromium(): void {
  if (!existsSync(CHROMIUM)) {
    throw new Error(`chromium not found at ${CHROMIUM}: install it with "apt-get install -y chromium" (bash .ci/run does this)`);
  }
}

export async function launchBrowser(): Promise<Browser> {
  requireChromium();
  return chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
}

export interface RunningServer {
  url: string;
  port: number;
  process: ChildProcess;
  dbPath: string;
  stop(signal?: NodeJS.Signals): Promise<void>;
}

/**
 * Starts `subtherm serve` as a real process on a free port with a fresh SQLite database (or the PostgreSQL database
 * `databaseUrl`); resolves once it listens.
 */
export async function startServerProcess(opts: { dbPath?: string; databaseUrl?: string; env?: Record<string, string> } = {}): Promise<RunningServer> {
  mkdirSync(join(ROOT, '.tmp'), { recursive: true });
  const dbPath = opts.dbPath ?? join(mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-db-')), 'test.sqlite');
  // A PostgreSQL URL (databaseUrl) stands instead of the SQLite file.
  const store = opts.databaseUrl !== undefined ? ['--database-url', opts.databaseUrl] : ['--db', dbPath];
  const child = spawn(process.execPath, [join(ROOT, 'bin', 'subtherm.mjs'), 'serve', '--port', '0', '--host', '127.0.0.1', ...store], {
    cwd: ROOT,
    // The demo's default run stays off unless a test asks for it (SUBTHERM_DEMO_RUN=1): it would compete for the CPU.
    env: { ...process.env, SUBTHERM_DEMO_RUN: '0', ...opts.env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let log = '';
  const port = await new Promise<number>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`server did not start in 120 s:\n${log}`)), 120_000);
    child.stdout.on('data', (d: Buffer) => {
      log += d.toString();
      const m = /listening on http:\/\/localhost:(\d+)/.exec(log);
      if (m) {
        clearTimeout(timer);
        resolve(Number(m[1]));
      }
    });
    child.stderr.on('data', (d: Buffer) => (log += d.toString()));
    child.on('exit', (code) => {
      clearTimeout(timer);
      reject(new Error(`server exited with code ${code}:\n${log}`));
    });
  });
  return {
    url: `http://localhost:${port}`,
    port,
    process: child,
    dbPath,
    stop: (signal: NodeJS.Signals = 'SIGTERM') =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null || child.signalCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill(signal);
      }),
  };
}

/** Waits until the page's map has loaded its style, its sources and tiles, and stopped moving (polled, so an
 * idle event that fired before the call is never missed). */
export async function waitForMapIdle(page: Page, timeoutMs = 60_000): Promise<void> {
  await page.waitForFunction(
    () => {
      const map = window.subtherm?.map;
      return Boolean(map && map.isStyleLoaded() && map.loaded() && map.areTilesLoaded() && !map.isMoving());
    },
    undefined,
    { timeout: timeoutMs, polling: 100 },
  );
}

/**
 * Opens `url` in `page` and waits until the map is idle and the page has read its state (window.subtherm.ready);
 * `settle`: then waits for the map again (the data sources are filled once the state is read).
 */
export async function openMap(page: Page, url: string, settle = false): Promise<void> {
  await page.goto(url);
  await waitForMapIdle(page);
  await page.evaluate(() => window.subtherm!.ready);
  if (settle) await waitForMapIdle(page);
}

export interface MapSession {
  server: RunningServer;
  browser: Browser;
  page: Page;
  /** Stops the browser and the server (either may be missing when the start failed). */
  close(): Promise<void>;
}

/**
 * A real server, a browser and one page of `viewport`, as a browser test's `beforeAll` starts them: `pageErrors`
 * collects the page's uncaught errors, `timeoutMs` is every action's default timeout, `watch` sees the page before
 * it loads (request listeners), and unless `open` is false the page opens the map (openMap).
 */
export async function startMapSession(o: {
  viewport: { width: number; height: number };
  pageErrors?: string[];
  timeoutMs?: number;
  acceptDownloads?: boolean;
  watch?: (page: Page) => void;
  open?: boolean;
}): Promise<MapSession> {
  mkdirSync(SCREENSHOT_DIR, { recursive: true });
  const server = await startServerProcess();
  const browser = await launchBrowser();
  const page = await browser.newPage({ viewport: o.viewport, ...(o.acceptDownloads ? { acceptDownloads: true } : {}) });
  if (o.timeoutMs !== undefined) page.setDefaultTimeout(o.timeoutMs);
  if (o.pageErrors) page.on('pageerror', (e) => o.pageErrors!.push(e.message));
  o.watch?.(page);
  if (o.open !== false) await openMap(page, server.url);
  return {
    server,
    browser,
    page,
    close: async () => {
      await browser.close();
      await server.stop();
    },
  };
}

/** How many features the page's map draws now in each of `layers` (MapLibre's queryRenderedFeatures, per layer). */
export async function renderedCounts(page: Page, layers: string[]): Promise<Record<string, number>> {
  return page.evaluate((ls) => {
    const map = window.subtherm!.map;
    return Object.fromEntries(ls.map((l) => [l, map.queryRenderedFeatures({ layers: [l] }).length]));
  }, layers);
}
