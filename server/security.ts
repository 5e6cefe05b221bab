/**
 * Secrets and response headers. Ids and tokens come from the CSPRNG (node:crypto randomBytes); an edit token is
 * 256 bits, stored only as its SHA-256 and compared in constant time (crypto.timingSafeEqual).
 */
import { createHash, randomBytes, timingSafeEqual } from 'node:crypto';
import { secureHeaders } from 'hono/secure-headers';
import type { MiddlewareHandler } from 'hono';

/** A new edit token: 32 random bytes, base64url (43 characters). */
export function newEditToken(): string {
  return randomBytes(32).toString('base64url');
}

/** SHA-256 of a token, hex: what the store keeps instead of the token. */
export function hashToken(token: string): string {
  return createHash('sha256').update(token, 'utf8').digest('hex');
}

/** True when `token` hashes to `storedHashHex`; constant-time in the hash bytes. */
export function tokenMatches(token: string, storedHashHex: string): boolean {
  const a = Buffer.from(hashToken(token), 'hex');
  const b = Buffer.from(storedHashHex, 'hex');
  return a.length === b.length && timingSafeEqual(a, b);
}

/**
 * The bearer token of an Authorization header, or null when there is none. Malformed headers (another scheme, an
 * empty token) count as none.
 */
export function bearerToken(header: string | undefined): string | null {
  if (header === undefined) return null;
  const m = /^Bearer[ ]+([A-Za-z0-9._~+/=-]+)\s*$/i.exec(header);
  return m ? m[1] : null;
}

/**
 * Content-Security-Policy that fits the map client: scripts and styles from this origin (MapLibre sets inline
 * styles, hence 'unsafe-inline' for styles only), MapLibre's worker from a blob: URL, images and canvases from
 * data: and blob: URLs, and fetches to this origin only.
 */
export const CONTENT_SECURITY_POLICY = {
  defaultSrc: ["'self'"],
  scriptSrc: ["'self'"],
  workerSrc: ["'self'", 'blob:'],
  childSrc: ["'self'", 'blob:'],
  imgSrc: ["'self'", 'data:', 'blob:'],
  styleSrc: ["'self'", "'unsafe-inline'"],
  fontSrc: ["'self'", 'data:'],
  connectSrc: ["'self'"],
  objectSrc: ["'none'"],
  baseUri: ["'self'"],
  formAction: ["'self'"],
  frameAncestors: ["'none'"],
};

/** hono/secure-headers with the policy above (nosniff, frame denial, no referrer across origins, ...). */
export function securityHeaders(): MiddlewareHandler {
  return secureHeaders({
    contentSecurityPolicy: CONTENT_SECURITY_POLICY,
    referrerPolicy: 'same-origin',
    xFrameOptions: 'DENY',
    crossOriginEmbedderPolicy: false,
  });
}

/** A database or queue URL with its password hidden (for messages and logs). */
export function redactUrl(url: string): string {
  try {
    const u = new URL(url);
    if (u.password !== '') u.password = '***';
    return u.toString();
  } catch {
    return '(a malformed URL)';
  }
}
