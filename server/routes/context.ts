/** What every route module is given, and the small request functions they share. */
import type { Context } from 'hono';
import type { IncomingMessage } from 'node:http';
import { InputError } from '../../shared/errors.ts';
import type { Limits } from '../limits.ts';
import type { RunQueue } from '../queue/select.ts';
import type { RunGridCache } from '../runs/grids.ts';
import type { ComputePools } from '../runs/pools.ts';
import type { HeatJobs } from '../runs/heat-jobs.ts';
import type { Store } from '../store/types.ts';
import { jsonDepthExceeds } from './schemas.ts';

export interface AppContext {
  store: Store;
  limits: Limits;
  jobs: RunQueue;
  grids: RunGridCache;
  /** Absolute path of the run worker module. */
  workerFile: string;
  /**
   * Worker pools: `short` for short column bands, `long` for long ones and sections, `jobs` for heat in place,
   * `layers` for a run's spread and probability layers, `data` for parsing large uploads, heat-flow corrections and
   * the vector GeoPackage export.
   */
  compute: ComputePools;
  heatJobs: HeatJobs;
  /** Peer addresses of reverse proxies whose X-Forwarded-For is believed (empty: none). */
  trustedProxies: ReadonlySet<string>;
}

/** Errors under /api/ are always `{ error: { code, message, details } }`. */
export function errorBody(code: string, message: string, details: unknown[] = []) {
  return { error: { code, message, details } };
}

/** The request body as text (UTF-8; invalid sequences become U+FFFD, then fail validation). */
export async function bodyText(c: Context): Promise<string> {
  return new TextDecoder().decode(await bodyBytes(c));
}

/**
 * The request body as bytes, read from Node's request stream straight into one buffer of the announced
 * content-length: each arriving chunk is copied once, as it arrives, and nothing is concatenated or copied at the
 * end, so a 50 MB upload never holds the request thread for more than one chunk's copy. The buffer is the view's
 * own (offset 0, its whole length), so it can be moved to a worker thread. A body sent without content-length
 * (chunked; bounded by the body-size guard) or one a middleware has already read comes through Hono instead.
 */
export async function bodyBytes(c: Context): Promise<Uint8Array<ArrayBuffer>> {
  const incoming = (c.env as { incoming?: IncomingMessage } | undefined)?.incoming;
  const announced = Number(c.req.header('content-length') ?? NaN);
  if (!incoming || incoming.readableDidRead || c.req.header('transfer-encoding') !== undefined || !Number.isSafeInteger(announced))
    return new Uint8Array(await c.req.arrayBuffer());
  const out = new Uint8Array(announced);
  let at = 0;
  await new Promise<void>((resolve, reject) => {
    const done = (e?: Error) => {
      incoming.off('data', onData).off('end', onEnd).off('error', done).off('close', onClose);
      if (e) reject(e);
      else resolve();
    };
    const onData = (chunk: Buffer) => {
      // Node's parser frames the body by its content-length, so this only guards against a mismatch.
      if (at + chunk.length > announced) return done(new Error('the request body is longer than its content-length'));
      out.set(chunk, at);
      at += chunk.length;
    };
    const onEnd = () => done(at === announced ? undefined : new Error('the request body ended before its content-length'));
    const onClose = () => done(incoming.readableEnded ? undefined : new Error('the client closed the connection before sending the whole body'));
    incoming.on('data', onData).on('end', onEnd).on('error', done).on('close', onClose);
  });
  return out;
}

/** Deepest nesting any JSON body may have (a MultiPolygon FeatureCollection needs 8; saved states get 64). */
export const MAX_BODY_JSON_DEPTH = 100;

/**
 * Parses JSON text; malformed JSON is a 400 that says where it broke, and nesting deeper than
 * MAX_BODY_JSON_DEPTH a 422 (deeper values would overflow the stack of every recursive step after parsing).
 */
export function parseJsonText(text: string): unknown {
  let v: unknown;
  try {
    v = JSON.parse(text) as unknown;
  } catch (e) {
    throw new InputError(`the request body is not valid JSON: ${(e as Error).message}`, [{ field: '(body)', problem: 'malformed JSON' }], 'bad_json');
  }
  if (jsonDepthExceeds(v, MAX_BODY_JSON_DEPTH)) {
    throw new InputError(
      `the JSON body is nested deeper than ${MAX_BODY_JSON_DEPTH} levels`,
      [{ field: '(body)', problem: `at most ${MAX_BODY_JSON_DEPTH} levels of nesting` }],
      'too_deep',
    );
  }
  return v;
}

/** Parses the body as JSON (see parseJsonText); an empty body is a 400. */
export async function jsonBody(c: Context): Promise<unknown> {
  const text = await bodyText(c);
  if (text.trim() === '') throw new InputError('the request body is empty: send a JSON object', [{ field: '(body)', problem: 'empty' }], 'empty_body');
  return parseJsonText(text);
}

/**
 * Requires a JSON media type on a mutating or heavy JSON route. A missing type is refused too: a page on another
 * site can send text/plain, form types or no type at all without asking, but never application/json.
 */
export function requireJsonType(c: Context): void {
  const type = (c.req.header('content-type') ?? '').split(';')[0].trim().toLowerCase();
  if (type !== 'application/json' && !(type.startsWith('application/') && type.endsWith('+json'))) {
    const got = type === '' ? 'no content-type' : type;
    throw new InputError(
      `expected a JSON body (content-type application/json), got ${got}`,
      [{ field: 'content-type', problem: `unsupported: ${got}; send application/json` }],
      'unsupported_media_type',
    );
  }
}

/**
 * The client's address for per-client limits and fairness: the socket's peer, or, when the peer is one of the
 * operator's listed proxies, the nearest X-Forwarded-For address that is not itself a listed proxy.
 */
export function clientAddress(c: Context, trustedProxies: ReadonlySet<string> = new Set()): string {
  const incoming = (c.env as { incoming?: IncomingMessage } | undefined)?.incoming;
  const peer = incoming?.socket?.remoteAddress ?? 'local';
  if (!trustedProxies.has(peer)) return peer;
  const chain = (c.req.header('x-forwarded-for') ?? '')
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s !== '');
  for (let i = chain.length - 1; i >= 0; i--) if (!trustedProxies.has(chain[i])) return chain[i].slice(0, 100);
  return peer;
}

/** Proxy addresses from SUBTHERM_TRUSTED_PROXIES (comma-separated; IPv4 also matched in its ::ffff: form). */
export function parseTrustedProxies(raw: string | undefined): Set<string> {
  const out = new Set<string>();
  for (const a of (raw ?? '')
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s !== '')) {
    out.add(a);
    if (/^\d+\.\d+\.\d+\.\d+$/.test(a)) out.add(`::ffff:${a}`);
  }
  return out;
}

export function notFound(what: string, id: string, code: string): InputError {
  return new InputError(`no ${what} with id "${id}"`, [{ field: 'id', problem: 'not found' }], code);
}

/** The query parameters, each given at most once (a repeated one is ambiguous: 400). */
export function singleQuery(c: Context): Record<string, string> {
  const all = c.req.queries();
  for (const [k, v] of Object.entries(all)) {
    if (v.length > 1) throw new InputError(`query parameter "${k}" is given ${v.length} times; give it once`, [{ field: k, problem: 'repeated' }], 'bad_query');
  }
  return c.req.query();
}
