/** Password and token hashing (bcryptjs: no native build). */
import { createHash, randomBytes } from 'node:crypto';
import bcrypt from 'bcryptjs';

const ROUNDS = 11;

/** bcrypt hash of a password or device secret. */
export function hashSecret(plain: string): Promise<string> {
  return bcrypt.hash(plain, ROUNDS);
}

/** True when the plain text matches the bcrypt hash. */
export function verifySecret(plain: string, hash: string | null): Promise<boolean> {
  if (!hash) return Promise.resolve(false);
  return bcrypt.compare(plain, hash);
}

/** A random URL-safe token of `bytes` bytes of entropy. */
export function randomToken(bytes = 32): string {
  return randomBytes(bytes).toString('base64url');
}

/** SHA-256 hex of a token (invitation tokens are looked up by this, never stored plain). */
export function tokenDigest(token: string): string {
  return createHash('sha256').update(token).digest('hex');
}
