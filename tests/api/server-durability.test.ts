// Durability: a real server process is killed with SIGKILL in the middle of a burst of saves (PUT revisions and
// POST projects). After a restart on the same database every acknowledged save must be there, the revisions of a
// project must run 1..N without gaps, and SQLite's PRAGMA integrity_check must say "ok". The processes' stdout and
// stderr (with the access log on) must never contain an edit token. Run against the SQLite file and PostgreSQL.
import { afterAll, describe, expect, it } from 'vitest';
import { startServerProcess, type RunningServer } from '../helpers/browser.ts';
import { TEST_DATABASES, type TestDatabase } from '../helpers/test-stores.ts';

const ENV = { SUBTHERM_ACCESS_LOG: '1' };
let servers: RunningServer[] = [];
let logs = '';

function capture(s: RunningServer): void {
  s.process.stdout!.on('data', (d: Buffer) => (logs += d.toString()));
  s.process.stderr!.on('data', (d: Buffer) => (logs += d.toString()));
}

let database: TestDatabase | null = null;
afterAll(async () => {
  for (const s of servers) await s.stop('SIGKILL');
  database?.stop();
});

describe.each(TEST_DATABASES)('durability under SIGKILL (%s)', (name, start) => {
  it('keeps every acknowledged save and an intact database', async () => {
    for (const s of servers) await s.stop('SIGKILL');
    servers = [];
    database?.stop();
    database = start();
    const db = database;
    const first = await startServerProcess({ ...db.server, env: ENV });
    servers.push(first);
    capture(first);
    const base = first.url;
    const created = (await (
      await fetch(`${base}/api/projects`, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify({ title: 'burst target', state: { n: 0 } }),
      })
    ).json()) as { id: string; editToken: string };
    const tokens = [created.editToken];
    const ackedRevisions = new Map<number, number>(); // revision → n of its state
    const ackedProjects: { id: string; title: string }[] = [];
    let n = 0;
    let stop = false;
    let acks = 0;
    // Eight clients save as fast as they can; the kill lands while requests are in flight.
    const client = async (k: number) => {
      while (!stop) {
        const mine = ++n;
        try {
          if (k % 2 === 0) {
            const res = await fetch(`${base}/api/projects/${created.id}`, {
              method: 'PUT',
              headers: { 'content-type': 'application/json', authorization: `Bearer ${created.editToken}` },
              body: JSON.stringify({ state: { n: mine, payload: 'x'.repeat(200) } }),
            });
            if (res.status === 200) {
              const { revision } = (await res.json()) as { revision: number };
              ackedRevisions.set(revision, mine);
              acks++;
            }
          } else {
            const res = await fetch(`${base}/api/projects`, {
              method: 'POST',
              headers: { 'content-type': 'application/json' },
              body: JSON.stringify({ title: `burst ${mine}`, state: { n: mine } }),
            });
            if (res.status === 201) {
              const b = (await res.json()) as { id: string; editToken: string };
              tokens.push(b.editToken);
              ackedProjects.push({ id: b.id, title: `burst ${mine}` });
              acks++;
            }
          }
        } catch {
          return; // the server is gone: this request was never acknowledged
        }
      }
    };
    const loops = Array.from({ length: 8 }, (_, k) => client(k));
    while (acks < 300) await new Promise((r) => setTimeout(r, 5));
    first.process.kill('SIGKILL');
    await Promise.all(loops.map((p) => p.catch(() => undefined)));
    stop = true;
    await new Promise<void>((r) => (first.process.exitCode !== null || first.process.signalCode !== null ? r() : first.process.once('exit', () => r())));
    expect(first.process.signalCode).toBe('SIGKILL');
    expect(ackedRevisions.size).toBeGreaterThan(50);
    expect(ackedProjects.length).toBeGreaterThan(50);

    const second = await startServerProcess({ ...db.server, env: ENV });
    servers.push(second);
    capture(second);
    for (const [revision, value] of ackedRevisions) {
      const r = (await (await fetch(`${second.url}/api/projects/${created.id}?revision=${revision}`)).json()) as { state: { n: number } };
      expect(r.state.n, `revision ${revision}`).toBe(value);
    }
    const list = (await (await fetch(`${second.url}/api/projects/${created.id}/revisions`)).json()) as { revisions: { revision: number }[] };
    expect(list.revisions.map((r) => r.revision)).toEqual(Array.from({ length: list.revisions.length }, (_, i) => i + 1));
    expect(list.revisions.length).toBeGreaterThanOrEqual(Math.max(...ackedRevisions.keys()));
    for (const p of ackedProjects) {
      const res = await fetch(`${second.url}/api/projects/${p.id}`);
      expect(res.status, p.id).toBe(200);
      const text = await res.text();
      expect((JSON.parse(text) as { title: string }).title).toBe(p.title);
      for (const t of [created.editToken]) expect(text).not.toContain(t);
    }
    // The restarted server still takes saves with the old token.
    const more = await fetch(`${second.url}/api/projects/${created.id}`, {
      method: 'PUT',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${created.editToken}` },
      body: JSON.stringify({ state: { n: -1 } }),
    });
    expect(more.status).toBe(200);
    await second.stop('SIGTERM');
    servers = servers.filter((s) => s !== second);

    if (db.intact) expect(await db.intact()).toBe(true);
    const stored = await db.query<{ n: number | string }>('SELECT count(*) AS n FROM project_revisions WHERE project_id = ?', [created.id]);
    expect(Number(stored[0].n)).toBe(list.revisions.length + 1);

    // Logs: the access log ran (saves are listed by path), and no token ever reached stdout or stderr.
    expect(logs).toMatch(/PUT \/api\/projects\/[A-Za-z0-9_-]+ 200/);
    for (const t of tokens) expect(logs.includes(t), 'a token in the server log').toBe(false);
    console.log(
      `durability (${name}): ${ackedRevisions.size} revisions and ${ackedProjects.length} projects acknowledged before SIGKILL; all present after restart`,
    );
  }, 120_000);
});
