/**
 * What every request passes before a route sees it, and how errors are answered: the error handler (storage full →
 * 507, InputError → its 4xx, anything else → 500 without a stack trace), the URL guard (malformed percent-encoding,
 * over-long paths, path segments outside the URL-safe alphabet and malformed ids → 400) and the body-size limit; and
 * the JSON answer to requests Node's HTTP parser refuses before the app sees them (answerClientError).
 */
import type { Context, ErrorHandler, MiddlewareHandler } from 'hono';
import type { Duplex } from 'node:stream';
import { bodyLimit } from 'hono/body-limit';
import { InputError } from '../../shared/errors.ts';
import { httpStatusOf, retryAfterSecondsOf } from '../http-status.ts';
import type { Limits } from '../limits.ts';
import { errorBody } from './context.ts';
import { idSchema } from './schemas.ts';

/** Longest URL path (without the query) the server reads, characters: ids are at most 100, layer names shorter. */
export const MAX_PATH_CHARS = 1024;

/** A path segment under /api/ once decoded: RFC 3986's unreserved characters, at most 200 of them. */
const API_SEGMENT = /^[A-Za-z0-9_.~-]{1,200}$/;

/** Collections whose next path segment is an id (letters, digits, _ and -, at most 100). */
const ID_COLLECTIONS = new Set(['runs', 'projects', 'datasets']);

/**
 * True for SQLite's "database or disk is full" (SQLITE_FULL), PostgreSQL's SQLSTATE 53100 disk_full (PostgreSQL
 * documentation, Appendix A "PostgreSQL Error Codes", class 53 insufficient resources) and the file system's
 * "no space left on device" (ENOSPC).
 */
export function isStorageFull(err: unknown): boolean {
  const e = err as { code?: unknown; message?: unknown } | null;
  return (
    e !== null &&
    typeof e === 'object' &&
    (e.code === 'SQLITE_FULL' || e.code === '53100' || e.code === 'ENOSPC' || (typeof e.message === 'string' && /database or disk is full/.test(e.message)))
  );
}

const pathOf = (c: Context) => {
  const raw = c.req.url;
  return raw.slice(raw.indexOf('/', raw.indexOf('//') + 2)).split('?')[0];
};

/** The app's error handler: 507 when storage is full, the InputError's status and code, else 500 "internal". */
export const errorHandler: ErrorHandler = (err, c) => {
  if (isStorageFull(err)) {
    // Each write is one transaction, so nothing was half written; reads go on being served.
    console.error(`[${new Date().toISOString()}] ${c.req.method} ${pathOf(c)}: storage full (${err.message})`);
    return c.json(
      errorBody(
        'insufficient_storage',
        'the server has no room left to store this (its disk or database is full); nothing was saved. Reading works as before; tell the operator.',
      ),
      507,
    );
  }
  if (err instanceof InputError) {
    const status = httpStatusOf(err.code);
    const headers: Record<string, string> = status === 401 ? { 'www-authenticate': 'Bearer realm="subtherm project"' } : {};
    const retry = retryAfterSecondsOf(err.code);
    if (retry !== null) headers['retry-after'] = String(retry);
    return c.json(errorBody(err.code, err.message, err.details), status, headers);
  }
  console.error(`[${new Date().toISOString()}] ${c.req.method} ${pathOf(c)}: ${err.stack ?? err.message}`);
  return c.json(errorBody('internal', 'internal server error'), 500);
};

/**
 * A URL that cannot name anything is a 400 before any route sees it: malformed percent-encoding (e.g. /%E0%A4%A),
 * a path longer than MAX_PATH_CHARS, under /api/ a segment outside the URL-safe alphabet (control characters,
 * spaces, slashes encoded as %2F) or a malformed run, project or data set id.
 */
export const urlGuard: MiddlewareHandler = async (c, next) => {
  const path = pathOf(c);
  const bad = (code: string, message: string, problem: string) => new InputError(message, [{ field: 'path', problem }], code);
  if (path.length > MAX_PATH_CHARS) throw bad('bad_url', `the URL path is ${path.length} characters long`, `at most ${MAX_PATH_CHARS} characters`);
  let segments: string[];
  try {
    segments = path.split('/').map(decodeURIComponent);
  } catch {
    throw bad('bad_url', 'the URL has malformed percent-encoding', 'each % must be followed by two hex digits forming valid UTF-8');
  }
  if (segments[1] === 'api') {
    const wrong = segments.slice(2).find((s, i) => (s !== '' || i < segments.length - 3) && (!API_SEGMENT.test(s) || s === '.' || s === '..'));
    if (wrong !== undefined)
      throw bad(
        'bad_url',
        `the URL path has a segment that names nothing: "${wrong.slice(0, 60)}${wrong.length > 60 ? '…' : ''}"`,
        'path segments have letters, digits, _ . ~ - only, at most 200 of them',
      );
    const id = segments[3];
    if (ID_COLLECTIONS.has(segments[2]) && id !== undefined && id !== '' && !idSchema.safeParse(id).success)
      throw bad(
        'bad_id',
        `"${id.slice(0, 60)}${id.length > 60 ? '…' : ''}" is not a ${segments[2].slice(0, -1)} id`,
        'an id has letters, digits, _ and - only, at most 100 of them',
      );
  }
  await next();
};

/**
 * Bodies over maxBodyBytes are refused (413) before any route parses them: by their content-length before a byte
 * is read, or, sent without one (chunked), while they are read. A body with a content-length is left unread here, so the route
 * reads it straight from Node's stream (context.ts bodyBytes).
 */
export function bodySizeGuard(limits: Limits): MiddlewareHandler {
  const tooLarge = (c: Context) =>
    c.json(
      errorBody(
        'body_too_large',
        `the request body is larger than ${limits.maxBodyBytes} bytes (${(limits.maxBodyBytes / 1048576).toPrecision(3)} MB), the server's limit maxBodyBytes`,
        [{ field: '(body)', problem: `at most ${limits.maxBodyBytes} bytes (limit maxBodyBytes = ${limits.maxBodyBytes})` }],
      ),
      413,
    );
  const counted = bodyLimit({ maxSize: limits.maxBodyBytes, onError: tooLarge });
  return async (c, next) => {
    const length = c.req.header('content-length');
    if (length === undefined || c.req.header('transfer-encoding') !== undefined) return counted(c, next);
    if (Number(length) > limits.maxBodyBytes) return tooLarge(c);
    await next();
  };
}

/** What Node's HTTP parser reports with a 'clientError' (node:http): the code and where in the packet it stopped. */
export interface ClientParseError extends Error {
  code?: string;
  bytesParsed?: number;
  rawPacket?: Buffer;
}

/**
 * What the clientError handler answers, by status and code: any request can meet these before a route sees it, so
 * the OpenAPI document lists them on every operation (openapi.ts).
 */
export const CLIENT_ERROR_ANSWERS = {
  400: { code: 'bad_request', when: 'the request is not valid HTTP/1.1' },
  408: { code: 'request_timeout', when: "the request line and headers did not arrive within the server's headers timeout" },
  414: { code: 'uri_too_long', when: "the request line (method and URL) overflows Node's header limit (maxHeaderSize, 16 KiB by default, with the headers)" },
  431: { code: 'headers_too_large', when: "the request line and headers together overflow Node's header limit (maxHeaderSize, 16 KiB by default)" },
} as const;

/**
 * The answer to a request Node's HTTP parser refused before any route could see it, in the API's JSON error shape:
 * a request line or header block over Node's header limit (`maxHeaderSize`, 16 KiB by default) is 414 when the
 * overflow is inside the request line (an over-long URL), else 431; a request that does not parse as HTTP is 400;
 * a request whose headers arrived too slowly is 408. Null when nothing can be written (the peer has gone).
 */
export function clientErrorAnswer(err: ClientParseError, maxHeaderBytes: number): { status: number; code: string; message: string; field: string } | null {
  if (err.code === 'ECONNRESET' || err.code === 'EPIPE') return null;
  if (err.code === 'HPE_HEADER_OVERFLOW') {
    const packet = err.rawPacket;
    const upTo = packet?.subarray(0, err.bytesParsed ?? packet.length);
    // The overflow is in the request line when this packet starts it and holds no line end before the overflow.
    const inRequestLine = upTo !== undefined && /^[A-Z]+ /.test(upTo.subarray(0, 16).toString('latin1')) && upTo.indexOf('\r\n') < 0;
    return inRequestLine
      ? {
          status: 414,
          code: CLIENT_ERROR_ANSWERS[414].code,
          message: `the request line (method and URL) is longer than the server reads: at most ${maxHeaderBytes} bytes with the headers, and the path at most ${MAX_PATH_CHARS} characters`,
          field: 'path',
        }
      : {
          status: 431,
          code: CLIENT_ERROR_ANSWERS[431].code,
          message: `the request line and headers are larger than the server reads (at most ${maxHeaderBytes} bytes together): send shorter headers, and put large data in the body`,
          field: 'headers',
        };
  }
  if (err.code === 'ERR_HTTP_REQUEST_TIMEOUT' || err.code === 'ERR_HTTP_HEADERS_TIMEOUT')
    return { status: 408, code: CLIENT_ERROR_ANSWERS[408].code, message: 'the request did not arrive in time', field: 'headers' };
  return { status: 400, code: CLIENT_ERROR_ANSWERS[400].code, message: `the request is not valid HTTP/1.1 (${err.code ?? 'parse error'})`, field: 'request' };
}

const REASONS: Record<number, string> = { 400: 'Bad Request', 408: 'Request Timeout', 414: 'URI Too Long', 431: 'Request Header Fields Too Large' };

/**
 * Handler of the HTTP server's 'clientError' event: writes a complete JSON response (clientErrorAnswer) straight to
 * the socket, since no request or response object exists yet, and closes the connection.
 */
export function answerClientError(maxHeaderBytes: number): (err: ClientParseError, socket: Duplex) => void {
  return (err, socket) => {
    const a = clientErrorAnswer(err, maxHeaderBytes);
    if (a === null || !socket.writable) {
      socket.destroy();
      return;
    }
    const body = JSON.stringify(errorBody(a.code, a.message, [{ field: a.field, problem: a.message }]));
    socket.end(
      `HTTP/1.1 ${a.status} ${REASONS[a.status]}\r\ncontent-type: application/json; charset=utf-8\r\ncontent-length: ${Buffer.byteLength(body)}\r\n` +
        `cache-control: no-store\r\nx-content-type-options: nosniff\r\nconnection: close\r\n\r\n${body}`,
    );
  };
}
