/**
 * Device secrets: 32 random bytes, shown once. Stored as SHA-256, not bcrypt: the secret is
 * high-entropy (nothing to brute-force), and a fleet of controllers reconnecting after an outage
 * must not cost ~100 ms of CPU each.
 */
import { createHash, randomBytes, timingSafeEqual } from 'node:crypto';

/** A new device secret (base64url, 43 characters). */
export function newDeviceSecret(): string {
  return randomBytes(32).toString('base64url');
}

/** The stored form of a device secret. */
export function hashDeviceSecret(secret: string): string {
  return `sha256:${createHash('sha256').update(secret).digest('hex')}`;
}

/** Constant-time check of a presented secret against the stored form. */
export function verifyDeviceSecret(presented: string | Buffer | undefined, stored: string): boolean {
  if (presented === undefined || !stored.startsWith('sha256:')) return false;
  const a = Buffer.from(hashDeviceSecret(presented.toString()), 'utf8');
  const b = Buffer.from(stored, 'utf8');
  return a.length === b.length && timingSafeEqual(a, b);
}
