/**
 * Web Push for the server: the VAPID keys (kept in MariaDB), the local fake push service when
 * PUSH_FAKE=1, and sending one encrypted message to one subscription with the web-push package.
 */
import https from 'node:https';
import net from 'node:net';
import type { Sequelize } from 'sequelize';
import webpush, { WebPushError } from 'web-push';
import type { Config } from '../config';
import type { Logger } from '../logger';
import { FakePushService, type VirtualDevice } from './fakePushService';
import { deleteSubscription, deleteSubscriptionsWithPrefix, loadOrCreateVapidKeys, markSent, saveSubscription, type StoredSubscription, type VapidKeys } from './store';

/** How long a push service keeps an undelivered alarm push, s (RFC 8030 §5.2 TTL). An hour: older alarm news goes by e-mail and escalation. */
export const ALARM_PUSH_TTL_S = 3600;
/** Time allowed for one push request, ms. */
const PUSH_TIMEOUT_MS = 10_000;

/**
 * web-push always speaks TLS (https.request); the local fake listens on plain HTTP on loopback.
 * This agent hands https.request a plain TCP socket to 127.0.0.1 and is used for the fake's
 * endpoints only, never for a real push service.
 */
class LoopbackPlainAgent extends https.Agent {
  override createConnection(options: { port?: number | string | null }): net.Socket {
    return net.createConnection({ host: '127.0.0.1', port: Number(options.port) });
  }
}

/** An agent for web-push requests to the local fake push service (plain HTTP on 127.0.0.1). */
export function loopbackPlainAgent(): https.Agent {
  return new LoopbackPlainAgent();
}

/** The outcome of one push attempt. */
export interface PushResult {
  ok: boolean;
  /** HTTP status from the push service (0 when none was received). */
  status: number;
  /** Why it failed, for the notification log (null when sent). */
  reason: string | null;
  /** The push service says the subscription no longer exists (404/410): it was deleted. */
  removed: boolean;
}

export class PushService {
  private agent = loopbackPlainAgent();

  private constructor(
    private readonly sequelize: Sequelize,
    private readonly config: Config,
    private readonly logger: Logger,
    readonly keys: VapidKeys,
    /** The local fake push service (PUSH_FAKE=1), or null. */
    readonly fake: FakePushService | null,
  ) {}

  /** Loads (or makes) the VAPID keys and starts the fake push service when configured. */
  static async start(sequelize: Sequelize, config: Config, logger: Logger): Promise<PushService> {
    const keys = await loadOrCreateVapidKeys(sequelize);
    let fake: FakePushService | null = null;
    if (config.PUSH_FAKE) {
      fake = new FakePushService();
      const port = await fake.listen(config.PUSH_FAKE_PORT);
      // A fake device's keys live in this process only: subscriptions left by an earlier run cannot be decrypted any more.
      const stale = await deleteSubscriptionsWithPrefix(sequelize, 'http://127.0.0.1:');
      logger.info({ port, staleRemoved: stale }, 'fake push service listening (push inbox at /api/v1/dev/push-inbox)');
    }
    return new PushService(sequelize, config, logger, keys, fake);
  }

  /** Whether an endpoint may be subscribed: https, or this process's fake push service. */
  endpointAllowed(endpoint: string): boolean {
    if (this.fake?.owns(endpoint)) return true;
    try {
      const u = new URL(endpoint);
      return u.protocol === 'https:' && u.username === '' && u.password === '';
    } catch {
      return false;
    }
  }

  /** Creates a virtual device on the fake push service and subscribes it for a user (demo and tests). */
  async addVirtualDevice(userId: number, label: string): Promise<{ device: VirtualDevice; subscription: StoredSubscription }> {
    if (!this.fake) throw new Error('the fake push service is off (PUSH_FAKE=0)');
    const device = this.fake.createDevice(label);
    const subscription = await saveSubscription(this.sequelize, userId, { endpoint: device.endpoint, p256dh: device.keys.p256dh, auth: device.keys.auth, label });
    return { device, subscription };
  }

  /** Sends one JSON payload to one subscription; a 404/410 answer deletes the subscription. */
  async send(sub: StoredSubscription, payload: object, opts: { urgency: 'normal' | 'high'; topic: string }): Promise<PushResult> {
    try {
      const res = await webpush.sendNotification({ endpoint: sub.endpoint, keys: { p256dh: sub.p256dh, auth: sub.auth } }, JSON.stringify(payload), {
        vapidDetails: { subject: this.config.PUSH_VAPID_SUBJECT, publicKey: this.keys.publicKey, privateKey: this.keys.privateKey },
        TTL: ALARM_PUSH_TTL_S,
        urgency: opts.urgency,
        topic: opts.topic,
        contentEncoding: 'aes128gcm',
        timeout: PUSH_TIMEOUT_MS,
        ...(this.fake?.owns(sub.endpoint) ? { agent: this.agent } : {}),
      });
      await markSent(this.sequelize, sub.id, new Date());
      return { ok: true, status: res.statusCode, reason: null, removed: false };
    } catch (err) {
      if (err instanceof WebPushError) {
        const gone = err.statusCode === 404 || err.statusCode === 410;
        if (gone) await deleteSubscription(this.sequelize, sub.id, null);
        const said = typeof err.body === 'string' && err.body.trim() ? `: ${err.body.trim().slice(0, 120)}` : '';
        return { ok: false, status: err.statusCode, reason: `push service answered HTTP ${err.statusCode}${said}${gone ? ' (subscription removed)' : ''}`, removed: gone };
      }
      const message = err instanceof Error ? err.message : String(err);
      this.logger.warn({ err, subscriptionId: sub.id }, 'push request failed');
      return { ok: false, status: 0, reason: `no answer from the push service: ${message}`.slice(0, 300), removed: false };
    }
  }

  /** Closes the fake push service and the agent. */
  async stop(): Promise<void> {
    this.agent.destroy();
    await this.fake?.close();
  }
}
