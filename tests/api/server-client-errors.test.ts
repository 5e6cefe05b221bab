// Requests Node's HTTP parser refuses before any route sees them get the API's JSON error shape from a real server
// (startServer, as `subtherm serve` runs it): a URL over Node's header limit (http.maxHeaderSize, 16 KiB by default)
// is 414, a header block over it 431 (RFC 9110 §15.5.15 and RFC 6585 §5), bytes that are not HTTP 400; each answer
// is complete (content-length matches) and closes the connection, and the server goes on serving. The server's
// OpenAPI 3.1 document lists each of these answers, with the code the server sends, on every operation (a Response
// Object, or a Reference Object to components.responses, per status: OAS 3.1.0 §4.8.16–17).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { maxHeaderSize } from 'node:http';
import { connect } from 'node:net';
import { mkdtempSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { startServer } from '../../server/main.ts';
import { clientErrorAnswer } from '../../server/routes/guards.ts';

let server: Awaited<ReturnType<typeof startServer>>;
let dir: string;

beforeAll(async () => {
  dir = mkdtempSync(join(process.env.TMPDIR ?? tmpdir(), 'subtherm-client-errors-'));
  server = await startServer({ port: 0, host: '127.0.0.1', dbPath: join(dir, 'db.sqlite'), demoRun: false, log: () => {} });
}, 120_000);
afterAll(async () => {
  await server?.close();
  rmSync(dir, { recursive: true, force: true });
});

/** Sends raw bytes (in pieces of `chunk` bytes when given) and reads the whole answer until the server closes. */
function raw(data: string, chunk?: number): Promise<{ status: number; headers: Record<string, string>; body: string; closed: boolean }> {
  return new Promise((resolve, reject) => {
    const socket = connect(server.port, '127.0.0.1');
    let got = '';
    socket.on('data', (d: Buffer) => (got += d.toString('utf8')));
    socket.on('error', reject);
    socket.on('close', () => {
      const [head, ...rest] = got.split('\r\n\r\n');
      const lines = head.split('\r\n');
      const headers = Object.fromEntries(lines.slice(1).map((l) => [l.slice(0, l.indexOf(':')).toLowerCase(), l.slice(l.indexOf(':') + 1).trim()]));
      resolve({ status: Number(lines[0].split(' ')[1]), headers, body: rest.join('\r\n\r\n'), closed: true });
    });
    socket.on('connect', () => {
      void (async () => {
        if (chunk === undefined) socket.write(data);
        else
          for (let i = 0; i < data.length && !socket.destroyed; i += chunk) {
            socket.write(data.slice(i, i + chunk));
            await new Promise((r) => setTimeout(r, 2));
          }
      })();
    });
  });
}

function expectJsonError(r: Awaited<ReturnType<typeof raw>>, status: number, code: string, field: string): void {
  expect(r.status).toBe(status);
  expect(r.headers['content-type']).toMatch(/^application\/json/);
  expect(r.headers.connection).toBe('close');
  expect(Number(r.headers['content-length'])).toBe(Buffer.byteLength(r.body));
  const j = JSON.parse(r.body) as { error: { code: string; message: string; details: { field: string }[] } };
  expect(j.error.code).toBe(code);
  expect(j.error.details[0].field).toBe(field);
}

describe("requests Node's HTTP parser refuses", () => {
  it('a URL longer than the header limit gets 414 JSON naming the path', async () => {
    const r = await raw(`GET /api/runs/${'a'.repeat(maxHeaderSize + 100)} HTTP/1.1\r\nHost: x\r\n\r\n`);
    expectJsonError(r, 414, 'uri_too_long', 'path');
    expect(r.body).toContain(String(maxHeaderSize));
  });

  it('a header block over the limit gets 431 JSON naming the headers', async () => {
    const r = await raw(`GET /api/health HTTP/1.1\r\nHost: x\r\nX-Padding: ${'b'.repeat(maxHeaderSize + 100)}\r\n\r\n`);
    expectJsonError(r, 431, 'headers_too_large', 'headers');
  });

  it('many small headers that add up over the limit get 431 JSON, also when they arrive in pieces', async () => {
    const headers = Array.from({ length: 400 }, (_, i) => `X-H${i}: ${'c'.repeat(60)}\r\n`).join('');
    expectJsonError(await raw(`GET /api/health HTTP/1.1\r\nHost: x\r\n${headers}\r\n`, 700), 431, 'headers_too_large', 'headers');
  });

  it('bytes that are not HTTP get 400 JSON', async () => {
    expectJsonError(await raw('HELLO THERE\r\n\r\n'), 400, 'bad_request', 'request');
  });

  it('the OpenAPI document lists 400, 408, 414 and 431 with the codes the server sends, on every operation', async () => {
    const sent = {
      414: JSON.parse((await raw(`GET /api/health/${'a'.repeat(maxHeaderSize + 100)} HTTP/1.1\r\nHost: x\r\n\r\n`)).body).error.code as string,
      431: JSON.parse((await raw(`GET /api/health HTTP/1.1\r\nHost: x\r\nX-Pad: ${'b'.repeat(maxHeaderSize + 100)}\r\n\r\n`)).body).error.code as string,
      400: JSON.parse((await raw('HELLO THERE\r\n\r\n')).body).error.code as string,
      // Node's headers timeout is a minute: the handler's answer to that error stands for the wait here.
      408: clientErrorAnswer({ name: 'Error', message: 'timeout', code: 'ERR_HTTP_REQUEST_TIMEOUT' }, maxHeaderSize)!.code,
    };
    expect(sent).toEqual({ 414: 'uri_too_long', 431: 'headers_too_large', 400: 'bad_request', 408: 'request_timeout' });
    type Answer = { description?: string; $ref?: string; content?: Record<string, { schema: { $ref?: string } }> };
    const doc = (await (await fetch(`http://127.0.0.1:${server.port}/api/openapi.json`)).json()) as {
      paths: Record<string, Record<string, { responses: Record<string, Answer> }>>;
      components: { responses: Record<string, Answer>; schemas: Record<string, unknown> };
    };
    const resolve = (a: Answer): Answer => (a.$ref ? doc.components.responses[a.$ref.replace('#/components/responses/', '')] : a);
    let operations = 0;
    for (const [path, item] of Object.entries(doc.paths))
      for (const [method, operation] of Object.entries(item)) {
        operations++;
        for (const [status, code] of Object.entries(sent)) {
          const answer = operation.responses[status];
          expect(answer, `${method} ${path} ${status}`).toBeDefined();
          const r = resolve(answer);
          expect(r.description, `${method} ${path} ${status}`).toContain(code);
          expect(r.content?.['application/json'].schema.$ref).toBe('#/components/schemas/Error');
        }
      }
    expect(operations).toBeGreaterThan(30);
    expect(doc.components.schemas.Error).toBeDefined();
  });

  it('the server goes on serving after each refusal', async () => {
    const r = await fetch(`http://127.0.0.1:${server.port}/api/health`);
    expect(r.status).toBe(200);
    expect(((await r.json()) as { ok: boolean }).ok).toBe(true);
  });
});
