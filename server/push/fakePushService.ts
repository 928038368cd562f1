/**
 * A local fake push service (PUSH_FAKE=1, development, demo and tests) that is also the receiving
 * device: it creates "virtual device" subscriptions (its own P-256 key pair and auth secret per
 * device), accepts Web Push requests (RFC 8030 §5) on 127.0.0.1, checks their VAPID header
 * (RFC 8292), decrypts the aes128gcm body (RFC 8291) and keeps the last messages in memory.
 */
import http from 'node:http';
import type { AddressInfo } from 'node:net';
import { randomBytes, randomUUID } from 'node:crypto';
import type { PushInboxMessage } from '../../shared/schemas/push';
import { checkVapidHeader, decryptPushBody, deviceKeysFrom, type DeviceKeys } from './ece';

/** Messages kept in memory, newest first. */
const KEEP = 500;
/** Largest body accepted, bytes (RFC 8030 §7.2: a push service must accept at least 4096). */
const MAX_BODY_BYTES = 8192;

export interface VirtualDevice {
  id: string;
  label: string;
  endpoint: string;
  /** As `PushSubscription.toJSON().keys` gives them (base64url). */
  keys: { p256dh: string; auth: string };
}

interface DeviceState extends VirtualDevice {
  receive: DeviceKeys;
}

export class FakePushService {
  private server: http.Server;
  private port = 0;
  private nextId = 1;
  private devices = new Map<string, DeviceState>();
  /** Devices that were forgotten: pushes to them answer 410 Gone, as a real service does after unsubscribe. */
  private gone = new Set<string>();
  readonly messages: PushInboxMessage[] = [];
  /** Every HTTP status answered, in order (tests). */
  readonly answered: number[] = [];

  constructor() {
    this.server = http.createServer((req, res) => {
      this.handle(req, res).catch(() => {
        if (!res.headersSent) res.writeHead(500).end();
      });
    });
  }

  /** Listens on 127.0.0.1:port (0 = any free port); resolves the port. */
  listen(port: number): Promise<number> {
    return new Promise((resolve, reject) => {
      this.server.once('error', reject);
      this.server.listen(port, '127.0.0.1', () => {
        this.port = (this.server.address() as AddressInfo).port;
        resolve(this.port);
      });
    });
  }

  /** The origin pushes are sent to (the VAPID audience), e.g. http://127.0.0.1:40123. */
  get origin(): string {
    return `http://127.0.0.1:${this.port}`;
  }

  /** Whether an endpoint URL belongs to this fake service. */
  owns(endpoint: string): boolean {
    return endpoint.startsWith(`${this.origin}/push/`);
  }

  /** Creates a virtual device: a fresh key pair and auth secret, and its endpoint on this service. */
  createDevice(label: string): VirtualDevice {
    const receive = deviceKeysFrom(randomBytes(32), randomBytes(16));
    const id = randomUUID();
    const device: DeviceState = {
      id,
      label,
      endpoint: `${this.origin}/push/${id}`,
      keys: { p256dh: receive.publicKey.toString('base64url'), auth: receive.authSecret.toString('base64url') },
      receive,
    };
    this.devices.set(id, device);
    return { id, label, endpoint: device.endpoint, keys: device.keys };
  }

  /** Forgets a device: later pushes to it answer 410 Gone. */
  forgetDevice(id: string): void {
    this.devices.delete(id);
    this.gone.add(id);
  }

  /** The decrypted messages one device received, newest first. */
  messagesFor(deviceId: string): PushInboxMessage[] {
    return this.messages.filter((m) => m.deviceId === deviceId);
  }

  private answer(res: http.ServerResponse, status: number, text = '', headers: Record<string, string> = {}): void {
    this.answered.push(status);
    if (this.answered.length > KEEP) this.answered.shift();
    res.writeHead(status, { 'content-type': 'text/plain', ...headers }).end(text);
  }

  private async handle(req: http.IncomingMessage, res: http.ServerResponse): Promise<void> {
    const m = /^\/push\/([0-9a-f-]{36})$/.exec(req.url ?? '');
    if (!m?.[1]) return this.answer(res, 404, 'no such endpoint');
    if (req.method !== 'POST') return this.answer(res, 405, 'push with POST', { allow: 'POST' });
    const id = m[1];
    const body = await readBody(req, MAX_BODY_BYTES);
    if (body === null) return this.answer(res, 413, `payload larger than ${MAX_BODY_BYTES} bytes`);
    const device = this.devices.get(id);
    if (!device) return this.answer(res, this.gone.has(id) ? 410 : 404, this.gone.has(id) ? 'subscription gone' : 'no such subscription');
    const vapid = checkVapidHeader(header(req, 'authorization'), this.origin);
    if ('error' in vapid) return this.answer(res, 401, vapid.error);
    const ttl = Number(header(req, 'ttl'));
    // RFC 8030 §5.2: TTL is required.
    if (!Number.isInteger(ttl) || ttl < 0) return this.answer(res, 400, 'TTL header missing or not a non-negative integer');
    let text: string | null = null;
    let error: string | null = null;
    if (body.length > 0) {
      if (header(req, 'content-encoding')?.toLowerCase() !== 'aes128gcm') return this.answer(res, 415, 'Content-Encoding must be aes128gcm');
      try {
        text = decryptPushBody(body, device.receive).toString('utf8');
      } catch (err) {
        error = err instanceof Error ? err.message : String(err);
      }
    } else text = '';
    const msgId = this.nextId++;
    this.messages.unshift({ id: msgId, deviceId: id, deviceLabel: device.label, receivedAt: new Date().toISOString(), ttlS: ttl, urgency: header(req, 'urgency') ?? null, topic: header(req, 'topic') ?? null, text, error });
    this.messages.length = Math.min(this.messages.length, KEEP);
    // RFC 8030 §5: 201 Created with the message's location.
    this.answer(res, 201, '', { location: `${this.origin}/message/${msgId}` });
  }

  /** Stops listening and drops open connections. */
  close(): Promise<void> {
    return new Promise((resolve) => {
      this.server.closeAllConnections();
      this.server.close(() => resolve());
    });
  }
}

function header(req: http.IncomingMessage, name: string): string | undefined {
  const v = req.headers[name];
  return Array.isArray(v) ? v[0] : v;
}

/** Reads a request body up to a limit; null when it is larger. */
function readBody(req: http.IncomingMessage, limit: number): Promise<Buffer | null> {
  return new Promise((resolve, reject) => {
    const chunks: Buffer[] = [];
    let size = 0;
    let over = false;
    req.on('data', (c: Buffer) => {
      size += c.length;
      if (size > limit) over = true;
      else chunks.push(c);
    });
    req.on('end', () => resolve(over ? null : Buffer.concat(chunks)));
    req.on('error', reject);
  });
}
