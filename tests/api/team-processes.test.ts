// Two `subtherm serve` and two `subtherm worker` processes on one PostgreSQL database and one Redis queue (throwaway
// cluster and redis-server on loopback), with the real run pipeline. A Monte Carlo run started through server A is
// followed live through server B's event stream; the worker running it is killed with SIGKILL mid-run, and the run
// must then end within KILL_TO_END_S seconds, either done on the other worker or failed with the reason (never left
// running); its layers and tiles are served by B. Meanwhile saves go to one project through both servers with the
// edit token A issued: every acknowledged save is there afterwards, and a request without it, or with another token,
// writes on neither server. Needs PostgreSQL and redis-server installed (bash .ci/run installs them); without them
// the test fails with the install line.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Redis } from 'ioredis';
import { startPgCluster, type PgCluster } from '../helpers/pg-cluster.ts';
import { startRedisServer, type RedisServer } from '../helpers/redis-server.ts';
import { startSubtherm, type SubthermProcess } from '../helpers/subtherm-process.ts';
import { LEASE_MS, REAP_MS } from '../../server/queue/connection.ts';

const ROOT = new URL('../..', import.meta.url).pathname;
/**
 * Seconds from the SIGKILL to the run's end: the lease running out and the reaper (LEASE_MS + REAP_MS), a cold start
 * of a worker thread on the other worker, and the whole run again on a loaded two-core machine.
 */
const KILL_TO_END_S = 240;
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

interface RunEvent {
  event: string;
  data: { status: string; progress: number; message: string };
}

/** Reads a run's event stream until its end event (or `ms`), returning every event. */
async function readEvents(url: string, ms: number): Promise<RunEvent[]> {
  const res = await fetch(url, { signal: AbortSignal.timeout(ms) });
  const reader = res.body!.getReader();
  const events: RunEvent[] = [];
  let text = '';
  try {
    for (;;) {
      const { done, value } = await reader.read();
      if (done) break;
      text += new TextDecoder().decode(value);
      for (let k = text.indexOf('\n\n'); k >= 0; k = text.indexOf('\n\n')) {
        const block = text.slice(0, k);
        text = text.slice(k + 2);
        const ev = /^event: (.*)$/m.exec(block)?.[1];
        const data = /^data: (.*)$/m.exec(block)?.[1];
        if (ev !== undefined && data !== undefined) events.push({ event: ev, data: JSON.parse(data) as RunEvent['data'] });
        if (ev === 'end') return events;
      }
    }
  } catch {
    // timed out: the caller's checks say what was missing
  }
  return events;
}

describe('two servers and two workers on one PostgreSQL database and one Redis queue', () => {
  let cluster: PgCluster;
  let redis: RedisServer;
  const servers: SubthermProcess[] = [];
  let workers: SubthermProcess[] = [];
  let base: [string, string];

  beforeAll(async () => {
    cluster = startPgCluster(ROOT);
    redis = await startRedisServer(ROOT);
    const env = { SUBTHERM_DATABASE_URL: cluster.url, SUBTHERM_QUEUE_URL: redis.url };
    // The schema first (servers also migrate at start, under a lock); this also builds the CLI once.
    await startSubtherm(['migrate'], /schema version \d+/, env).then((p) => p.stop());
    // One after the other: the first builds the web client when it is stale, the second then finds it built.
    for (let k = 0; k < 2; k++) servers.push(await startSubtherm(['serve', '--port', '0'], /listening on http:\/\/localhost:(\d+)/, env));
    workers = await Promise.all([0, 1].map(() => startSubtherm(['worker', '--concurrency', '1'], /subtherm worker (wkr_\S+) taking runs/, env)));
    base = [`http://127.0.0.1:${servers[0].match[1]}`, `http://127.0.0.1:${servers[1].match[1]}`];
  }, 240_000);
  afterAll(async () => {
    for (const p of [...workers, ...servers]) await p.stop('SIGKILL');
    await redis?.stop();
    cluster?.stop();
  });

  it('reports the queue and both workers in /api/health of each server', async () => {
    for (const b of base) {
      let health: Record<string, unknown> = {};
      for (let i = 0; i < 50; i++) {
        health = (await (await fetch(`${b}/api/health`)).json()) as Record<string, unknown>;
        if (health.workerProcesses === 2) break;
        await sleep(200);
      }
      expect(health).toMatchObject({ ok: true, store: 'postgresql', queue: 'redis', workers: 2, workerProcesses: 2 });
      expect(health.eventLoopDelayMs).toMatchObject({ p50: expect.any(Number), p99: expect.any(Number), max: expect.any(Number) });
    }
  });

  it('survives a worker killed mid-run, serves the run through B and keeps every save made through A and B', async () => {
    const post = (b: string, path: string, body: unknown, token?: string, method = 'POST') =>
      fetch(`${b}${path}`, {
        method,
        headers: { 'content-type': 'application/json', ...(token !== undefined ? { authorization: `Bearer ${token}` } : {}) },
        body: JSON.stringify(body),
      });
    const project = (await (await post(base[0], '/api/projects', { title: 'Shared survey', state: { n: 0 } })).json()) as { id: string; editToken: string };
    // Saves through both servers while the run goes on.
    const acked = new Map<number, number>();
    let saving = true;
    const saver = async (k: number) => {
      for (let n = k; saving; n += 2) {
        const res = await post(base[k % 2], `/api/projects/${project.id}`, { state: { n } }, project.editToken, 'PUT');
        expect(res.status).toBe(200);
        acked.set(((await res.json()) as { revision: number }).revision, n);
        await sleep(100);
      }
    };
    const saves = [saver(0), saver(1)];

    const started = await post(base[0], '/api/runs', {
      sites: 'demo-sites',
      model: 'demo-model',
      seed: 4242,
      realizations: 10,
      grid: { cellKm: 6 },
      title: 'team run',
    });
    expect(started.status).toBe(202);
    const { id } = (await started.json()) as { id: string };
    const stream = readEvents(`${base[1]}/api/runs/${id}/events`, (KILL_TO_END_S + 120) * 1000);

    // Which worker holds the run, once it reports progress; then kill that worker.
    const q = new Redis(redis.url);
    let holder: string | null = null;
    for (let i = 0; i < 1200 && holder === null; i++) {
      const [worker, status, progress] = await q.hmget(`subtherm:run:${id}`, 'worker', 'status', 'progress');
      if (status === 'running' && Number(progress) > 0 && worker) holder = worker;
      else await sleep(100);
    }
    await q.quit();
    expect(holder).not.toBeNull();
    const victim = workers.find((w) => w.match[1] === holder)!;
    await victim.stop('SIGKILL');
    const killedAt = Date.now();

    const events = await stream;
    const seconds = (Date.now() - killedAt) / 1000;
    saving = false;
    await Promise.all(saves);
    const end = events.at(-1)!;
    if (end.event !== 'end') {
      console.log(JSON.stringify(events.slice(-5)), workers.map((w) => w.output().slice(-3000)).join('\n----\n'));
    }
    expect(end.event).toBe('end');
    expect(seconds).toBeLessThan(KILL_TO_END_S);
    // Live progress through B while the first worker ran it, and the hand-on to the other worker.
    expect(events.filter((e) => e.data.status === 'running' && e.data.progress > 0 && e.data.progress < 1).length).toBeGreaterThan(1);
    expect(events.some((e) => e.data.status === 'queued' && /worker running it stopped/.test(e.data.message))).toBe(true);
    if (end.data.status !== 'done') expect(end.data).toMatchObject({ status: 'failed', message: expect.stringMatching(/worker/) });
    else {
      const run = (await (await fetch(`${base[1]}/api/runs/${id}`)).json()) as { layers: { name: string; urls: Record<string, string> }[] };
      const tif = run.layers.find((l) => l.urls.tif !== undefined)!;
      const tiles = (await (await fetch(`${base[1]}/api/runs/${id}/tiles/${tif.name}.json`)).json()) as {
        tiles: string[];
        minzoom: number;
        bounds: [number, number, number, number];
      };
      // The tile under the middle of the layer at its least zoom (Web Mercator tile numbering, OSM slippy-map scheme).
      const z = tiles.minzoom;
      const lon = (tiles.bounds[0] + tiles.bounds[2]) / 2,
        lat = ((tiles.bounds[1] + tiles.bounds[3]) / 2) * (Math.PI / 180);
      const x = Math.floor(((lon + 180) / 360) * 2 ** z),
        y = Math.floor(((1 - Math.log(Math.tan(lat) + 1 / Math.cos(lat)) / Math.PI) / 2) * 2 ** z);
      const tileUrl = tiles.tiles[0].replace('{z}', String(z)).replace('{x}', String(x)).replace('{y}', String(y));
      const tile = await fetch(tileUrl.startsWith('http') ? tileUrl : `${base[1]}${tileUrl}`);
      expect(tile.status).toBe(200);
      expect(tile.headers.get('content-type')).toBe('image/png');
      expect((await fetch(`${base[1]}${tif.urls.tif}`)).status).toBe(200);
    }

    // Every acknowledged save is there, through either server; the revisions run 1..N without gaps.
    for (const b of base) {
      const revs = ((await (await fetch(`${b}/api/projects/${project.id}/revisions`)).json()) as { revisions: { revision: number }[] }).revisions;
      expect(revs.map((r) => r.revision)).toEqual(Array.from({ length: revs.length }, (_, k) => k + 1));
      for (const [revision, n] of acked) {
        const rec = (await (await fetch(`${b}/api/projects/${project.id}?revision=${revision}`)).json()) as { state: { n: number } };
        expect(rec.state.n).toBe(n);
      }
    }
    // Without the edit token (a view link), or with another token, neither server writes.
    for (const b of base) {
      expect((await post(b, `/api/projects/${project.id}`, { state: {} }, undefined, 'PUT')).status).toBe(401);
      expect((await post(b, `/api/projects/${project.id}`, { state: {} }, 'a-view-link-has-no-token', 'PUT')).status).toBe(403);
    }
    console.log(`run ${id}: ended ${end.data.status} ${seconds.toFixed(1)} s after its worker was killed (lease ${LEASE_MS} ms, reaper every ${REAP_MS} ms)`);
  }, 600_000);
});
