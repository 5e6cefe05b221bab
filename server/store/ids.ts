import { createHash, randomBytes } from 'node:crypto';

/** A new random id: 16 bytes from the CSPRNG, base64url (22 characters). */
export function newId(prefix = ''): string {
  return prefix + randomBytes(16).toString('base64url');
}

export function sha256Hex(text: string | Uint8Array): string {
  return createHash('sha256').update(text).digest('hex');
}
