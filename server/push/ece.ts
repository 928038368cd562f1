/**
 * The receiving side of Web Push message encryption, with node:crypto only: RFC 8291 (ECDH P-256
 * + HKDF key schedule) over RFC 8188 "aes128gcm" content coding, and a check of the RFC 8292
 * VAPID Authorization header. Used by the fake push service, which plays the user's device.
 */
import { createDecipheriv, createECDH, createPublicKey, hkdfSync, verify, type ECDH } from 'node:crypto';

/** base64url (RFC 4648 §5) → bytes; padding optional. */
export function fromB64u(s: string): Buffer {
  return Buffer.from(s.replace(/=+$/, ''), 'base64url');
}

/** A device's receiving keys: the ECDH P-256 pair and the 16-byte auth secret (RFC 8291 §3). */
export interface DeviceKeys {
  ecdh: ECDH;
  /** Uncompressed public point, 65 bytes. */
  publicKey: Buffer;
  authSecret: Buffer;
}

/** Rebuilds device keys from a private scalar (32 bytes) and an auth secret (16 bytes). */
export function deviceKeysFrom(privateKey: Buffer, authSecret: Buffer): DeviceKeys {
  const ecdh = createECDH('prime256v1');
  ecdh.setPrivateKey(privateKey);
  return { ecdh, publicKey: ecdh.getPublicKey(), authSecret };
}

const hkdf = (ikm: Buffer, salt: Buffer, info: Buffer, bytes: number) => Buffer.from(hkdfSync('sha256', ikm, salt, info, bytes));

/** Thrown when a body is not a well-formed aes128gcm message for these keys. */
export class DecryptError extends Error {}

/**
 * Decrypts an aes128gcm push message body (RFC 8188 §2 header: salt 16 | rs uint32 | idlen | keyid
 * = sender's public key) for a device; returns the plaintext bytes.
 */
export function decryptPushBody(body: Buffer, keys: DeviceKeys): Buffer {
  if (body.length < 21) throw new DecryptError('body shorter than the aes128gcm header');
  const salt = body.subarray(0, 16);
  const rs = body.readUInt32BE(16);
  const idLen = body[20] ?? 0;
  // RFC 8291 §4: keyid is the sender's ephemeral public key, an uncompressed P-256 point.
  if (idLen !== 65) throw new DecryptError(`keyid is ${idLen} bytes, not a 65-byte P-256 public key`);
  if (rs < 18) throw new DecryptError(`record size ${rs} is below the minimum of 18`);
  const senderPublic = body.subarray(21, 21 + idLen);
  const records = body.subarray(21 + idLen);
  let ecdhSecret: Buffer;
  try {
    ecdhSecret = keys.ecdh.computeSecret(senderPublic);
  } catch {
    throw new DecryptError('keyid is not a point on P-256');
  }
  // RFC 8291 §3.4: IKM = HKDF(auth_secret, ecdh_secret, "WebPush: info" 0x00 ua_public as_public, 32).
  const keyInfo = Buffer.concat([Buffer.from('WebPush: info\0'), keys.publicKey, senderPublic]);
  const ikm = hkdf(ecdhSecret, keys.authSecret, keyInfo, 32);
  // RFC 8188 §2.2 and §2.3: content-encryption key and nonce from the salt.
  const cek = hkdf(ikm, salt, Buffer.from('Content-Encoding: aes128gcm\0'), 16);
  const baseNonce = hkdf(ikm, salt, Buffer.from('Content-Encoding: nonce\0'), 12);
  const out: Buffer[] = [];
  const count = Math.ceil(records.length / rs);
  if (count === 0) throw new DecryptError('no record');
  for (let seq = 0; seq < count; seq++) {
    const record = records.subarray(seq * rs, (seq + 1) * rs);
    if (record.length < 17) throw new DecryptError(`record ${seq} is too short`);
    const nonce = Buffer.from(baseNonce);
    // RFC 8188 §2.3: nonce = base XOR sequence number (96-bit big-endian); records here stay below 2^32.
    nonce.writeUInt32BE((nonce.readUInt32BE(8) ^ seq) >>> 0, 8);
    const decipher = createDecipheriv('aes-128-gcm', cek, nonce);
    decipher.setAuthTag(record.subarray(record.length - 16));
    let plain: Buffer;
    try {
      plain = Buffer.concat([decipher.update(record.subarray(0, record.length - 16)), decipher.final()]);
    } catch {
      throw new DecryptError(`record ${seq} failed authentication (wrong keys or a tampered body)`);
    }
    // RFC 8188 §2: data, a delimiter (2 in the last record, 1 before), then zero padding.
    let end = plain.length - 1;
    while (end >= 0 && plain[end] === 0) end--;
    const last = seq === count - 1;
    if (end < 0 || plain[end] !== (last ? 2 : 1)) throw new DecryptError(`record ${seq} has no valid padding delimiter`);
    out.push(plain.subarray(0, end));
  }
  return Buffer.concat(out);
}

/** What a valid VAPID Authorization header says (RFC 8292 §2 and §3). */
export interface VapidClaims {
  aud: string;
  exp: number;
  sub: string | null;
  /** The sender's public key (base64url). */
  publicKey: string;
}

/**
 * Checks an `Authorization: vapid t=<JWT>, k=<key>` header: an ES256 JWT signed by k, for this
 * audience (origin), not expired and at most 24 h ahead (RFC 8292 §2). Returns its claims or the reason it fails.
 */
export function checkVapidHeader(header: string | undefined, audience: string, nowS = Date.now() / 1000): VapidClaims | { error: string } {
  if (!header) return { error: 'no Authorization header' };
  const m = /^vapid\s+(.+)$/i.exec(header.trim());
  if (!m?.[1]) return { error: 'Authorization is not of the vapid scheme' };
  const params = new Map<string, string>();
  for (const part of m[1].split(',')) {
    const eq = part.indexOf('=');
    if (eq > 0) params.set(part.slice(0, eq).trim().toLowerCase(), part.slice(eq + 1).trim());
  }
  const jwt = params.get('t');
  const k = params.get('k');
  if (!jwt || !k) return { error: 'vapid header lacks t= or k=' };
  const [h, p, s] = jwt.split('.');
  if (!h || !p || !s) return { error: 't is not a JWT' };
  let head: { alg?: string };
  let claims: { aud?: string; exp?: number; sub?: string };
  try {
    head = JSON.parse(fromB64u(h).toString('utf8')) as { alg?: string };
    claims = JSON.parse(fromB64u(p).toString('utf8')) as { aud?: string; exp?: number; sub?: string };
  } catch {
    return { error: 'the JWT header or claims are not JSON' };
  }
  if (head.alg !== 'ES256') return { error: `JWT alg ${String(head.alg)} is not ES256` };
  const point = fromB64u(k);
  if (point.length !== 65 || point[0] !== 4) return { error: 'k is not an uncompressed P-256 public key' };
  let ok = false;
  try {
    const key = createPublicKey({ key: { kty: 'EC', crv: 'P-256', x: point.subarray(1, 33).toString('base64url'), y: point.subarray(33).toString('base64url') }, format: 'jwk' });
    ok = verify('sha256', Buffer.from(`${h}.${p}`), { key, dsaEncoding: 'ieee-p1363' }, fromB64u(s));
  } catch {
    ok = false;
  }
  if (!ok) return { error: 'the JWT signature does not verify with k' };
  if (claims.aud !== audience) return { error: `aud ${String(claims.aud)} is not ${audience}` };
  if (typeof claims.exp !== 'number' || claims.exp <= nowS) return { error: 'the JWT has expired' };
  if (claims.exp > nowS + 24 * 3600 + 60) return { error: 'exp is more than 24 h ahead (RFC 8292 §2)' };
  return { aud: claims.aud, exp: claims.exp, sub: typeof claims.sub === 'string' ? claims.sub : null, publicKey: k };
}
