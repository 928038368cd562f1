/** Password and token hashing (bcryptjs: no native build). */
import { createHash, randomBytes } from 'node:crypto';
import bcrypt from 'bcryptjs';

const ROUNDS = 11;

/** bcrypt hash of a password or device secret. */
export function hashSecret(plain: string): Promise<string> {
  return bcrypt.hash(plain, ROUNDS);
}

let decoyHash: Promise<string> | undefined;

/**
 * True when the plain text matches the bcrypt hash. Without a hash (unknown account, password
 * never set) it still runs one compare against a decoy of the same cost, so the answer takes the
 * same time and does not reveal whether the account exists.
 */
export async function verifySecret(plain: string, hash: string | null): Promise<boolean> {
  if (!hash) {
    decoyHash ??= bcrypt.hash(randomToken(), ROUNDS);
    await bcrypt.compare(plain, await decoyHash);
    return false;
  }
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
