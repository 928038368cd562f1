/**
 * The ingest: an ordinary MQTT client (persistent session, QoS 1) of the embedded or an external
 * broker. A message is acknowledged only after its reading is committed, so a crash, a broker
 * restart or a database outage loses nothing: unacknowledged messages are delivered again.
 * Messages are handled in batches (by size and by a short time window). When the database fails,
 * the ingest drops its connection without acknowledging, waits for the database and reconnects.
 */
import mqtt, { type IPublishPacket, type MqttClient } from 'mqtt';
import type { z } from 'zod';
import type { Logger } from '../logger';
import type { EventBus } from '../events/bus';
import type { Models } from '../models';
import { ConfigAckPayload, INGEST_READY_TOPIC, MAX_COMMITTED_SEQS, MAX_FUTURE_SKEW_MS, MAX_TELEMETRY_BYTES, StatusPayload, TelemetryPayload, parseControllerTopic, topics, TOPIC_PREFIX } from '../../shared/schemas/telemetry';
import { convertReading, type ConvertedReading } from './convert';
import type { BoxCache } from './boxCache';
import type { TelemetryMetrics, RejectReason } from './metrics';
import { isTransientError, toDto, type BatchWriter } from './writer';
import { SensorQuality } from './quality';

export interface IngestOptions {
  url: string;
  username: string;
  password: string;
  clientId?: string;
  batchSize?: number;
  /** The longest an idle ingest waits to gather a batch, ms (default 50); the wait itself follows the load (batchWindow()). */
  batchWindowMs?: number;
  /** Readings older than this many days are refused (their partitions are gone). */
  maxAgeDays: number;
  models: Models;
  bus: EventBus;
  metrics: TelemetryMetrics;
  logger: Logger;
  writer: BatchWriter;
  boxes: BoxCache;
  /** Called for each config/ack after the batch it came in is committed. */
  onConfigAck?: (serial: string, ack: ConfigAckPayload) => Promise<void>;
  /** The topic kinds this ingest subscribes to (default all three). */
  kinds?: readonly IngestKind[];
  /**
   * An MQTT 5 shared-subscription group: the broker spreads the messages of these topics over
   * every ingest subscribed in the group (INGEST_WORKERS). The session is kept for
   * SHARED_SESSION_EXPIRY_S after a disconnect, so a restarted worker gets its unacknowledged messages again.
   */
  shareGroup?: string;
}

export type IngestKind = 'telemetry' | 'status' | 'config/ack';
export const INGEST_KINDS: readonly IngestKind[] = ['telemetry', 'status', 'config/ack'];
/** How long mosquitto keeps a shared-subscription worker's session after it disconnects (7 days). */
export const SHARED_SESSION_EXPIRY_S = 7 * 86_400;

/** The subscriptions of an ingest: `rimehold/v1/ctl/+/<kind>`, under `$share/<group>/` in a group. */
export function ingestSubscriptions(kinds: readonly IngestKind[], shareGroup?: string): Record<string, { qos: 1 }> {
  const out: Record<string, { qos: 1 }> = {};
  for (const k of kinds) out[`${shareGroup ? `$share/${shareGroup}/` : ''}${TOPIC_PREFIX}/+/${k}`] = { qos: 1 };
  return out;
}

/** Shortest batch window, ms: below it a batch would hardly ever hold more than one reading. */
export const MIN_BATCH_WINDOW_MS = 2;

/**
 * How long an idle ingest waits for more readings before it commits, ms: about as long as its recent
 * commits took, within [MIN_BATCH_WINDOW_MS, maxMs]. Readings that arrive while a commit runs form
 * the next batch anyway, so under load the batches grow by themselves; when the load is light a
 * short wait keeps the latency down, and a slow database (long commits) gathers more per commit.
 */
export function batchWindow(recentCommitMs: number, maxMs: number): number {
  return Math.min(maxMs, Math.max(MIN_BATCH_WINDOW_MS, Math.round(recentCommitMs)));
}

type Item =
  | { kind: 'reading'; messageId: number | undefined; gen: number; reading: ConvertedReading; controllerId: number; customerId: number; serial: string }
  | { kind: 'status'; messageId: number | undefined; gen: number; serial: string; online: boolean }
  | { kind: 'ack'; messageId: number | undefined; gen: number; serial: string; ack: ConfigAckPayload }
  /** Nothing to store; `settled` names a reading refused for good, whose seq is confirmed all the same. */
  | { kind: 'none'; messageId: number | undefined; gen: number; settled?: { serial: string; seq: number } }
  /** Waiting for the box lookup of a cold cache; never part of a batch until resolved. */
  | { kind: 'lookup'; messageId: number | undefined; gen: number; done: Promise<void> };

/** JSON.parse then the schema; a failure names its reject reason and what was wrong. */
function parseJsonPayload<S extends z.ZodType>(payload: Buffer, schema: S): { ok: true; data: z.infer<S> } | { ok: false; reason: 'bad-json' | 'schema'; detail: string } {
  let json: unknown;
  try {
    json = JSON.parse(payload.toString('utf8'));
  } catch {
    return { ok: false, reason: 'bad-json', detail: 'not JSON' };
  }
  const r = schema.safeParse(json);
  if (!r.success) return { ok: false, reason: 'schema', detail: r.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ') };
  return { ok: true, data: r.data };
}

/** Thrown into mqtt.js's handleMessage callback: it skips its own PUBACK, we send ours after the commit. */
const DEFER = new Error('ack deferred until commit');

interface PrivateClient {
  _sendPacket(packet: { cmd: 'puback'; messageId: number }, cb?: () => void): void;
}

export class Ingest {
  private client: MqttClient | null = null;
  private gen = 0;
  private pending: Item[] = [];
  private timer: NodeJS.Timeout | null = null;
  private flushing: Promise<void> | null = null;
  private paused = false;
  private stopped = false;
  private lastSeen = new Map<number, number>();
  /** Controllers known online since their last status or reading (drives the online flag from readings). */
  private reporting = new Set<number>();
  private touchTimer: NodeJS.Timeout | null = null;
  private lastRejectLog = new Map<string, number>();
  /** Stuck-sensor state per box (open, shorted and out-of-range need none). */
  private readonly quality = new SensorQuality();
  readonly counts = { accepted: 0, duplicates: 0, rejected: 0, outages: 0 };
  private readonly batchSize: number;
  private readonly windowMs: number;
  /** Mean duration of the recent commits, ms (exponentially weighted): sets the batch window. */
  private commitMs: number;

  constructor(private readonly o: IngestOptions) {
    this.batchSize = o.batchSize ?? 1000;
    this.windowMs = o.batchWindowMs ?? 50;
    this.commitMs = this.windowMs;
  }

  /** Connects and subscribes; resolves once subscribed. */
  async start(): Promise<void> {
    this.stopped = false;
    await this.o.boxes.preload().catch((err: unknown) => this.o.logger.warn({ err }, 'box preload failed; boxes load on first reading'));
    this.touchTimer = setInterval(() => void this.touch(), 10_000);
    await this.connect();
  }

  /** True while connected to the broker. */
  get connected(): boolean {
    return this.client?.connected === true;
  }

  private connect(): Promise<void> {
    const o = this.o;
    const client = mqtt.connect(o.url, {
      clientId: o.clientId ?? 'rimehold-ingest',
      username: o.username,
      password: o.password,
      clean: false,
      // A shared subscription is MQTT 5; a v5 session ends at disconnect unless it is given an expiry.
      ...(o.shareGroup ? { protocolVersion: 5 as const, properties: { sessionExpiryInterval: SHARED_SESSION_EXPIRY_S } } : { protocolVersion: 4 as const }),
      reconnectPeriod: 1000,
      connectTimeout: 10_000,
      keepalive: 30,
      resubscribe: true,
    });
    this.client = client;
    // gen counts connections: a PUBACK is only ever sent on the connection its message came on.
    let first = true;
    client.on('connect', () => {
      this.gen++;
      // mosquitto 2.0 restores a session from its persistence file but not the session's shared
      // subscriptions: a shared-group ingest subscribes again on every reconnect (idempotent).
      if (!first && o.shareGroup) {
        client
          .subscribeAsync(ingestSubscriptions(o.kinds ?? INGEST_KINDS, o.shareGroup))
          .then(() => this.announceReady(client))
          .catch((err: Error) => o.logger.error({ err: err.message }, 'ingest resubscribe failed'));
      }
      first = false;
    });
    client.handleMessage = (packet, callback) => {
      this.receive(packet, this.gen);
      callback(DEFER);
    };
    client.on('error', (err) => o.logger.warn({ err: err.message }, 'ingest mqtt error'));
    client.on('close', () => {
      // Whatever was received on the lost connection will be delivered again: forget it.
      const gen = this.gen;
      this.pending = this.pending.filter((i) => i.gen !== gen);
      o.metrics.queueDepth.set(this.pending.length);
    });
    return new Promise((resolve, reject) => {
      client.once('connect', (connack) => {
        const subs = ingestSubscriptions(o.kinds ?? INGEST_KINDS, o.shareGroup);
        if (connack.sessionPresent) {
          o.logger.info('ingest resumed its persistent session');
          if (!o.shareGroup) return resolve();
        }
        client.subscribeAsync(subs).then(() => {
          this.announceReady(client);
          resolve();
        }, reject);
      });
      client.once('error', reject);
    });
  }

  /**
   * Subscribed afresh: readings sent since the broker came back may have found no subscriber and
   * been acknowledged all the same (mosquitto). Controllers holding unconfirmed readings send them again.
   */
  private announceReady(client: MqttClient): void {
    if (!client.connected) return;
    client.publish(INGEST_READY_TOPIC, '', { qos: 0 });
  }

  private reject(serial: string, reason: RejectReason, detail: string): void {
    this.o.metrics.rejected.inc({ reason });
    this.counts.rejected++;
    const last = this.lastRejectLog.get(serial) ?? 0;
    if (Date.now() - last > 60_000) {
      this.lastRejectLog.set(serial, Date.now());
      this.o.logger.warn({ serial, reason, detail }, 'telemetry rejected (logged once per controller per minute)');
    }
  }

  /** Validates one message into a queue item (synchronously where possible, to keep the order). */
  private receive(packet: IPublishPacket, gen: number): void {
    const messageId = packet.messageId;
    const t = parseControllerTopic(packet.topic);
    const payload = Buffer.isBuffer(packet.payload) ? packet.payload : Buffer.from(packet.payload);
    if (!t) {
      this.reject('?', 'topic', packet.topic);
      return this.enqueue({ kind: 'none', messageId, gen });
    }
    if (t.kind === 'status') {
      const s = StatusPayload.safeParse(payload.toString('utf8').trim());
      if (!s.success) this.reject(t.serial, 'schema', 'status must be online or offline');
      return this.enqueue(s.success ? { kind: 'status', messageId, gen, serial: t.serial, online: s.data === 'online' } : { kind: 'none', messageId, gen });
    }
    if (t.kind === 'config/ack') {
      const a = parseJsonPayload(payload, ConfigAckPayload);
      if (!a.ok) {
        this.reject(t.serial, a.reason, a.detail);
        return this.enqueue({ kind: 'none', messageId, gen });
      }
      return this.enqueue({ kind: 'ack', messageId, gen, serial: t.serial, ack: a.data });
    }
    if (t.kind !== 'telemetry') {
      this.reject(t.serial, 'topic', packet.topic);
      return this.enqueue({ kind: 'none', messageId, gen });
    }
    if (payload.length > MAX_TELEMETRY_BYTES) {
      this.reject(t.serial, 'too-large', `${payload.length} bytes`);
      return this.enqueue({ kind: 'none', messageId, gen });
    }
    const r = parseJsonPayload(payload, TelemetryPayload);
    if (!r.ok) {
      this.reject(t.serial, r.reason, r.detail);
      return this.enqueue({ kind: 'none', messageId, gen });
    }
    const tsMs = Date.parse(r.data.ts);
    const settled = { serial: t.serial, seq: r.data.seq };
    if (tsMs > Date.now() + MAX_FUTURE_SKEW_MS) {
      this.reject(t.serial, 'future-ts', r.data.ts);
      return this.enqueue({ kind: 'none', messageId, gen, settled });
    }
    if (tsMs < Date.now() - this.o.maxAgeDays * 86_400_000) {
      this.reject(t.serial, 'too-old', r.data.ts);
      return this.enqueue({ kind: 'none', messageId, gen, settled });
    }
    // The box lookup is async on a cold cache: hold the slot so acks stay in order.
    const data = r.data;
    const serial = t.serial;
    const slot = { kind: 'lookup', messageId, gen } as Item & { done?: Promise<void> };
    // The box's conversion settings as they were at the reading's time (a replayed reading is late).
    slot.done = this.o.boxes.getAt(serial, tsMs).then(
      (box) => {
        if (!box) {
          this.reject(serial, 'unknown-serial', serial);
          Object.assign(slot, { kind: 'none', settled });
        } else if (box.disabled) {
          this.reject(serial, 'disabled', serial);
          Object.assign(slot, { kind: 'none', settled });
        } else {
          const sensors = this.quality.assess(box.boxId, data, box.saturationMethod, box.gaugeReference);
          Object.assign(slot, { kind: 'reading', reading: convertReading(data, box, sensors), controllerId: box.controllerId, customerId: box.customerId, serial });
        }
      },
      (err: unknown) => {
        // The database is failing: leave the message unacknowledged; the outage path reconnects.
        this.o.logger.error({ err }, 'box lookup failed');
        Object.assign(slot, { kind: 'none', messageId: undefined });
      },
    );
    this.enqueue(slot);
  }

  private enqueue(item: Item): void {
    this.pending.push(item);
    this.o.metrics.queueDepth.set(this.pending.length);
    if (this.pending.length >= this.batchSize) this.kick();
    else if (!this.timer) this.timer = setTimeout(() => this.kick(), batchWindow(this.commitMs, this.windowMs));
  }

  private kick(): void {
    if (this.timer) {
      clearTimeout(this.timer);
      this.timer = null;
    }
    if (this.flushing || this.paused) return;
    this.flushing = this.flushLoop().finally(() => {
      this.flushing = null;
    });
  }

  private async flushLoop(): Promise<void> {
    let attempt = 0;
    while (this.pending.length > 0 && !this.paused) {
      // A batch ends before the first message still waiting for its box lookup.
      const head = this.pending[0];
      if (head?.kind === 'lookup') {
        await head.done;
        continue;
      }
      const waiting = this.pending.findIndex((i) => i.kind === 'lookup');
      const batch = this.pending.slice(0, Math.min(this.batchSize, waiting < 0 ? this.pending.length : waiting));
      const gen = this.gen;
      const readings = batch.filter((i): i is Extract<Item, { kind: 'reading' }> => i.kind === 'reading' && i.gen === gen);
      const t0 = performance.now();
      try {
        const res = await this.o.writer.flush(readings.map((i) => i.reading));
        const tookMs = performance.now() - t0;
        this.o.metrics.insertSeconds.observe(tookMs / 1000);
        if (readings.length > 0) this.commitMs = 0.8 * this.commitMs + 0.2 * tookMs;
        this.o.metrics.batchSize.observe(readings.length);
        await this.sideEffects(batch);
        this.removeHandled(batch);
        this.o.metrics.queueDepth.set(this.pending.length);
        this.ackAll(batch, gen);
        this.o.metrics.accepted.inc(res.stored.length);
        this.o.metrics.duplicates.inc(res.duplicates);
        this.counts.accepted += res.stored.length;
        this.counts.duplicates += res.duplicates;
        const byId = new Map(readings.map((i) => [i.reading, i]));
        for (const r of res.stored) {
          const item = byId.get(r);
          if (!item) continue;
          this.lastSeen.set(item.controllerId, Date.parse(r.ts));
          if (!this.reporting.has(item.controllerId)) {
            // A controller whose readings arrive is online, whatever status message came (or was lost) before.
            this.reporting.add(item.controllerId);
            this.o.bus.emit('controller', { boxId: r.boxId, customerId: item.customerId, serial: item.serial, online: true, at: new Date().toISOString() });
          }
          this.o.bus.emit('reading', { boxId: r.boxId, customerId: item.customerId, reading: toDto(r) });
        }
      } catch (err) {
        // Deadlocks and lock waits are transient: try the same batch again at once.
        if (isTransientError(err) && attempt < 5) {
          attempt++;
          continue;
        }
        // Anything else (database down, a broken schema): acknowledge nothing, pause, come back.
        await this.outage(err);
        return;
      }
      attempt = 0;
    }
  }

  /** Removes a handled batch from the queue (the queue may have been cut by a lost connection meanwhile). */
  private removeHandled(batch: Item[]): void {
    if (this.pending[0] === batch[0]) this.pending.splice(0, batch.length);
    else {
      const done = new Set(batch);
      this.pending = this.pending.filter((i) => !done.has(i));
    }
  }

  private async sideEffects(batch: Item[]): Promise<void> {
    for (const i of batch) {
      if (i.kind === 'status') await this.status(i.serial, i.online);
      else if (i.kind === 'ack' && this.o.onConfigAck) await this.o.onConfigAck(i.serial, i.ack);
    }
  }

  private async status(serial: string, online: boolean): Promise<void> {
    const box = await this.o.boxes.get(serial);
    if (!box) return this.reject(serial, 'unknown-serial', serial);
    const at = new Date();
    if (online) this.reporting.add(box.controllerId);
    else this.reporting.delete(box.controllerId);
    await this.o.models.Controller.update({ online, lastSeenAt: at }, { where: { id: box.controllerId } });
    this.o.bus.emit('controller', { boxId: box.boxId, customerId: box.customerId, serial, online, at: at.toISOString() });
  }

  private ackAll(batch: Item[], gen: number): void {
    const client = this.client;
    if (!client || gen !== this.gen || !client.connected) return;
    // Each controller hears on its `committed` topic (QoS 0) the seqs settled here (docs/device-protocol.md).
    const seqs = new Map<string, number[]>();
    for (const i of batch) {
      if (i.gen !== gen || i.messageId === undefined) continue;
      (client as unknown as PrivateClient)._sendPacket({ cmd: 'puback', messageId: i.messageId });
      const done = i.kind === 'reading' ? { serial: i.serial, seq: i.reading.seq } : i.kind === 'none' ? i.settled : undefined;
      if (!done) continue;
      const list = seqs.get(done.serial);
      if (list) list.push(done.seq);
      else seqs.set(done.serial, [done.seq]);
    }
    // After the PUBACKs: a controller told "committed" may forget a reading the broker has let go of.
    for (const [serial, list] of seqs) {
      for (let k = 0; k < list.length; k += MAX_COMMITTED_SEQS) {
        client.publish(topics.committed(serial), JSON.stringify({ seqs: list.slice(k, k + MAX_COMMITTED_SEQS) }), { qos: 0 });
      }
    }
  }

  /** The database failed: drop the connection unacknowledged, wait for the database, come back. */
  private async outage(err: unknown): Promise<void> {
    this.paused = true;
    this.counts.outages++;
    this.o.metrics.dbOutages.inc();
    this.o.logger.error({ err: (err as Error)?.message }, 'database unavailable: ingest paused, the broker keeps the messages');
    const old = this.client;
    this.client = null;
    this.gen++;
    this.pending = [];
    this.o.metrics.queueDepth.set(0);
    if (old) await old.endAsync(true).catch(() => undefined);
    do await new Promise((r) => setTimeout(r, 1000));
    while (!this.stopped && !(await this.o.writer.ping()));
    if (this.stopped) return;
    this.paused = false;
    this.o.logger.info('database is back: ingest reconnecting');
    await this.connect().catch((e: unknown) => this.o.logger.error({ err: e }, 'ingest reconnect failed'));
  }

  private async touch(): Promise<void> {
    const seen = this.lastSeen;
    this.lastSeen = new Map();
    await this.o.writer.touchControllers(seen).catch(() => {
      for (const [k, v] of seen) this.lastSeen.set(k, Math.max(v, this.lastSeen.get(k) ?? 0));
    });
  }

  /** Publishes through the ingest's connection (config/set, demo faults). */
  async publish(topic: string, payload: string, opts: { qos?: 0 | 1; retain?: boolean } = {}): Promise<void> {
    if (!this.client?.connected) throw new Error('not connected to the broker');
    await this.client.publishAsync(topic, payload, { qos: opts.qos ?? 1, retain: opts.retain ?? false });
  }

  /** Waits until every received message is committed and acknowledged (tests, shutdown). */
  async drain(timeoutMs = 10_000): Promise<void> {
    const deadline = Date.now() + timeoutMs;
    while ((this.pending.length > 0 || this.flushing) && Date.now() < deadline) {
      this.kick();
      await new Promise((r) => setTimeout(r, 20));
    }
  }

  /** Drops the connection at once without acknowledging anything pending, as a crash would (tests). */
  async kill(): Promise<void> {
    this.stopped = true;
    if (this.touchTimer) clearInterval(this.touchTimer);
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    const c = this.client;
    this.client = null;
    this.gen++;
    this.pending = [];
    if (c) await c.endAsync(true).catch(() => undefined);
    await this.flushing?.catch(() => undefined);
  }

  /** Flushes what it can, then disconnects (messages not yet acknowledged stay with the broker). */
  async stop(): Promise<void> {
    this.stopped = true;
    if (this.touchTimer) clearInterval(this.touchTimer);
    await this.drain(5000);
    await this.touch();
    const c = this.client;
    this.client = null;
    if (c) await c.endAsync().catch(() => undefined);
  }
}
