/**
 * Limits the embedded broker applies before aedes sees a byte (aedes has none of its own):
 * a per-socket gate that reads each MQTT fixed header and closes the socket when a packet declares
 * more bytes than allowed, and a throttle for failed device sign-ins with a short cache of unknown serials.
 */
import { Duplex } from 'node:stream';
import type net from 'node:net';

/** Size limits of the gate, in bytes of an MQTT packet's remaining length. */
export interface GateLimits {
  /** Largest CONNECT packet (client id, credentials and will), bytes. */
  maxConnectBytes: number;
  /** Largest packet of any other kind, bytes. */
  maxPacketBytes: number;
}

/** Everything the embedded broker limits, with the defaults server/config.ts also uses. */
export interface BrokerLimits extends GateLimits {
  /** Open MQTT sockets at most; further ones are closed on accept. */
  maxConnections: number;
  /** Sockets that have not completed CONNECT at most; further ones are closed on accept. */
  maxPendingConnects: number;
  /** A socket that has not completed CONNECT (CONNACK accepted) within this is closed, ms. */
  connectDeadlineMs: number;
  /** Failed device sign-ins from one address before it is locked out. */
  maxDeviceAuthFailures: number;
  /** Lockout (and failure counting window) of an address, ms. */
  deviceAuthLockoutMs: number;
  /** How long an unknown serial is refused from memory without a query, ms. */
  unknownSerialTtlMs: number;
}

/** Defaults of BrokerLimits (sizes in bytes, times in ms). */
export const DEFAULT_BROKER_LIMITS: BrokerLimits = {
  maxConnectBytes: 1024,
  maxPacketBytes: 8192,
  maxConnections: 10_000,
  maxPendingConnects: 1000,
  connectDeadlineMs: 5000,
  maxDeviceAuthFailures: 30,
  deviceAuthLockoutMs: 60_000,
  unknownSerialTtlMs: 30_000,
};

const CONNECT = 1;

/**
 * A duplex over one TCP socket that passes bytes through unchanged while it follows the packet
 * framing; destroys the socket as soon as a fixed header declares a packet over its limit, a
 * first packet is not a CONNECT, or a remaining length is malformed. Nothing over the limit is buffered.
 */
export class PacketGate extends Duplex {
  /** Why the gate closed the socket, or null. */
  refusal: string | null = null;
  private header: number[] = [];
  private bodyLeft = 0;
  private packets = 0;

  constructor(
    readonly socket: net.Socket,
    private readonly limits: GateLimits,
    private readonly onRefused: (reason: string) => void,
  ) {
    super();
    socket.on('data', (chunk: Buffer) => {
      if (!this.inspect(chunk)) return;
      if (!this.push(chunk)) socket.pause();
    });
    socket.on('end', () => this.push(null));
    socket.on('error', (err) => this.destroy(err));
    // After a clean end, let aedes read what is still buffered before the gate goes.
    socket.on('close', (hadError) => {
      if (hadError || this.readableEnded || this.refusal) this.destroy();
      else this.once('end', () => this.destroy());
    });
  }

  /** Remote IP address of the socket. */
  get remoteAddress(): string {
    return this.socket.remoteAddress ?? '';
  }

  override _read(): void {
    this.socket.resume();
  }

  override _write(chunk: Buffer, _enc: BufferEncoding, cb: (err?: Error | null) => void): void {
    if (this.socket.destroyed) return cb();
    this.socket.write(chunk, () => cb());
  }

  override _final(cb: (err?: Error | null) => void): void {
    this.socket.end();
    cb();
  }

  override _destroy(err: Error | null, cb: (err?: Error | null) => void): void {
    this.socket.destroy();
    cb(err);
  }

  /** Follows the framing through one chunk; false (and the socket destroyed) on a refusal. */
  private inspect(chunk: Buffer): boolean {
    let i = 0;
    while (i < chunk.length) {
      if (this.bodyLeft > 0) {
        const take = Math.min(this.bodyLeft, chunk.length - i);
        this.bodyLeft -= take;
        i += take;
        continue;
      }
      this.header.push(chunk[i] ?? 0);
      i++;
      const h = this.header;
      if (h.length < 2) continue;
      const last = h[h.length - 1] ?? 0;
      if (last & 0x80) {
        if (h.length === 5) return this.refuse('malformed-length');
        continue;
      }
      let length = 0;
      for (let k = h.length - 1; k >= 1; k--) length = length * 128 + ((h[k] ?? 0) & 0x7f);
      const type = (h[0] ?? 0) >> 4;
      this.header = [];
      this.packets++;
      if (this.packets === 1 && type !== CONNECT) return this.refuse('first-not-connect');
      const limit = type === CONNECT ? this.limits.maxConnectBytes : this.limits.maxPacketBytes;
      if (length > limit) return this.refuse(type === CONNECT ? 'connect-too-large' : 'packet-too-large');
      this.bodyLeft = length;
    }
    return true;
  }

  private refuse(reason: string): false {
    this.refusal = reason;
    this.onRefused(reason);
    this.socket.destroy();
    return false;
  }
}

/** Settings of the sign-in throttle. */
export interface ThrottleOptions {
  /** Failed device sign-ins from one address before it is locked out. */
  maxFailures: number;
  /** Lockout and counting window, ms. */
  lockoutMs: number;
  /** How long an unknown serial is answered from memory, ms. */
  unknownSerialTtlMs: number;
  /** Entries kept in each map before the oldest are dropped. */
  maxEntries?: number;
}

/**
 * Counts failed device sign-ins per address (a lockout of lockoutMs after maxFailures within it)
 * and remembers serials the database does not know for a short while, so neither costs a query.
 */
const TRUST_MS = 24 * 3_600_000;

export class SignInThrottle {
  private failures = new Map<string, { count: number; sinceMs: number }>();
  private unknown = new Map<string, number>();
  private trusted = new Map<string, number>();
  private readonly maxEntries: number;

  constructor(private readonly o: ThrottleOptions) {
    this.maxEntries = o.maxEntries ?? 10_000;
  }

  /** True while the address is locked out (nowMs: epoch ms). */
  locked(address: string, nowMs = Date.now()): boolean {
    const f = this.failures.get(address);
    if (!f) return false;
    if (nowMs - f.sinceMs > this.o.lockoutMs) {
      this.failures.delete(address);
      return false;
    }
    return f.count >= this.o.maxFailures;
  }

  /** Records one failed device sign-in from an address (nowMs: epoch ms). */
  fail(address: string, nowMs = Date.now()): void {
    const f = this.failures.get(address);
    if (f && nowMs - f.sinceMs <= this.o.lockoutMs) {
      f.count++;
      // Locked: the lockout runs from the last failure.
      if (f.count >= this.o.maxFailures) f.sinceMs = nowMs;
      return;
    }
    this.failures.delete(address);
    this.failures.set(address, { count: 1, sinceMs: nowMs });
    trim(this.failures, this.maxEntries);
  }

  /**
   * Remembers a serial that signed in (nowMs: epoch ms). A locked address still admits the serials
   * it has seen sign in, so one misconfigured device behind a shared address (a store's router,
   * the demo on 127.0.0.1) cannot lock the rest of the fleet out.
   */
  trust(serial: string, nowMs = Date.now()): void {
    this.trusted.delete(serial);
    this.trusted.set(serial, nowMs);
    trim(this.trusted, this.maxEntries);
  }

  /** True when the serial signed in within the trust window (24 h; nowMs: epoch ms). */
  isTrusted(serial: string, nowMs = Date.now()): boolean {
    const at = this.trusted.get(serial);
    return at !== undefined && nowMs - at <= TRUST_MS;
  }

  /** True when the serial was looked up and unknown within the TTL (nowMs: epoch ms). */
  knownUnknown(serial: string, nowMs = Date.now()): boolean {
    const at = this.unknown.get(serial);
    if (at === undefined) return false;
    if (nowMs - at > this.o.unknownSerialTtlMs) {
      this.unknown.delete(serial);
      return false;
    }
    return true;
  }

  /** Remembers that the database has no controller with this serial (nowMs: epoch ms). */
  rememberUnknown(serial: string, nowMs = Date.now()): void {
    this.unknown.delete(serial);
    this.unknown.set(serial, nowMs);
    trim(this.unknown, this.maxEntries);
  }
}

function trim<K, V>(m: Map<K, V>, max: number): void {
  while (m.size > max) {
    const first = m.keys().next();
    if (first.done) return;
    m.delete(first.value);
  }
}
