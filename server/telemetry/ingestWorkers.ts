/**
 * Several ingest processes (INGEST_WORKERS ≥ 2, MQTT_BROKER=mosquitto): forks the workers
 * (ingestWorker.ts), each with its own mosquitto account and client id, subscribed to the
 * telemetry through the shared subscription `$share/<group>/rimehold/v1/ctl/+/telemetry`.
 * Status and config acks stay with the server's own ingest (one subscriber, so the settings
 * service sees each ack once). Committed readings come back over IPC and are emitted on the
 * server's bus, where the alarms and the live sockets take them as from the server's own ingest.
 * A worker that dies is started again with the same client id: mosquitto kept its session and
 * delivers its unacknowledged messages again, so nothing acknowledged to a controller is lost.
 */
import type { ChildProcess } from 'node:child_process';
import { z } from 'zod';
import type { Config } from '../config';
import type { EventBus } from '../events/bus';
import type { Logger } from '../logger';
import type { TelemetryMetrics } from './metrics';
import type { ReadingDto } from '../../shared/schemas/live';
import { CHILD_START_TIMEOUT_MS, forkTs, IpcRequests, RestartDelay, stopChild } from '../process/child';

/** The shared-subscription group of the ingest workers. */
export const INGEST_SHARE_GROUP = 'rimehold-ingest';

/** The mosquitto account of worker `index` (1-based): the ingest user and client id with a suffix. */
export function workerAccount(config: Pick<Config, 'MQTT_INGEST_USER' | 'MQTT_INGEST_PASSWORD' | 'MQTT_INGEST_CLIENT_ID'>, index: number) {
  return { username: `${config.MQTT_INGEST_USER}-w${index}`, password: config.MQTT_INGEST_PASSWORD, clientId: `${config.MQTT_INGEST_CLIENT_ID}-w${index}` };
}

export type ToIngestWorker =
  | {
      type: 'start';
      index: number;
      config: Config;
      logLevel: string;
      ingest: { url: string; username: string; password: string; clientId: string; shareGroup: string; batchSize?: number; batchWindowMs?: number };
    }
  | { type: 'boxChanged'; boxId: number }
  | { type: 'controllerRevoked'; serial: string; reason: 'disabled' | 'rotated' }
  /** Commit what you hold, send your events and counts, then 'synced' with this id. */
  | { type: 'sync'; id: number }
  | { type: 'stop' };

/** A committed reading as the worker's writer made it (only its identity is checked: it comes from our own code). */
const ReadingShape = z.custom<ReadingDto>((v) => typeof v === 'object' && v !== null && typeof (v as { ts?: unknown }).ts === 'string' && typeof (v as { seq?: unknown }).seq === 'number');
const ReadingEvent = z.object({ boxId: z.number().int(), customerId: z.number().int(), reading: ReadingShape });
const ControllerEvent = z.object({ boxId: z.number().int(), customerId: z.number().int(), serial: z.string(), online: z.boolean(), at: z.string() });

/** Messages from a worker; checked on arrival (a bad one is logged and dropped). */
export const FromIngestWorker = z.discriminatedUnion('type', [
  z.object({ type: z.literal('ready') }),
  z.object({ type: z.literal('failed'), message: z.string() }),
  z.object({ type: z.literal('synced'), id: z.number().int() }),
  z.object({ type: z.literal('events'), readings: z.array(ReadingEvent), controllers: z.array(ControllerEvent) }),
  z.object({
    type: z.literal('counts'),
    accepted: z.number().int().min(0),
    duplicates: z.number().int().min(0),
    outages: z.number().int().min(0),
    rejected: z.record(z.string(), z.number().int().min(0)),
  }),
]);
export type FromIngestWorker = z.infer<typeof FromIngestWorker>;

const ENTRY = new URL('./ingestWorker.ts', import.meta.url);
const SYNC_TIMEOUT_MS = 10_000;

export interface IngestWorkersOptions {
  count: number;
  url: string;
  config: Config;
  bus: EventBus;
  metrics: TelemetryMetrics;
  logger: Logger;
  batchSize?: number;
  batchWindowMs?: number;
}

interface Slot {
  index: number;
  child: ChildProcess | null;
  ready: boolean;
  started: boolean;
  restartDelay: RestartDelay;
  restartTimer: NodeJS.Timeout | null;
  /** Readings this worker has committed since the server started (its counts messages). */
  accepted: number;
}

export class IngestWorkers {
  private readonly slots: Slot[];
  private stopping = false;
  private readonly syncs = new IpcRequests(SYNC_TIMEOUT_MS);
  /** Times a worker died unexpectedly and was started again. */
  restarts = 0;
  private readonly onBox = (e: { boxId: number }) => this.broadcast({ type: 'boxChanged', boxId: e.boxId });
  private readonly onRevoked = (e: { serial: string; reason: 'disabled' | 'rotated' }) => this.broadcast({ type: 'controllerRevoked', serial: e.serial, reason: e.reason });

  constructor(private readonly o: IngestWorkersOptions) {
    this.slots = Array.from({ length: o.count }, (_, i) => ({ index: i + 1, child: null, ready: false, started: false, restartDelay: new RestartDelay(), restartTimer: null, accepted: 0 }));
  }

  /** Forks every worker; resolves once all are subscribed. */
  async start(): Promise<void> {
    this.stopping = false;
    this.o.bus.on('boxChanged', this.onBox);
    this.o.bus.on('controllerRevoked', this.onRevoked);
    try {
      await Promise.all(this.slots.map((s) => this.spawn(s)));
    } catch (err) {
      await this.stop();
      throw err;
    }
  }

  /** True while every worker runs and is subscribed. */
  get up(): boolean {
    return this.slots.every((s) => s.ready && s.child !== null);
  }

  /** Pids of the running workers, by worker (null while one is down). */
  get pids(): Array<number | null> {
    return this.slots.map((s) => s.child?.pid ?? null);
  }

  /** Readings committed per worker since start (as last reported). */
  get acceptedByWorker(): number[] {
    return this.slots.map((s) => s.accepted);
  }

  private broadcast(m: ToIngestWorker): void {
    for (const s of this.slots) if (s.child?.connected) s.child.send(m);
  }

  private spawn(s: Slot): Promise<void> {
    const o = this.o;
    const child = forkTs(ENTRY);
    s.child = child;
    s.ready = false;
    const account = workerAccount(o.config, s.index);
    child.send({
      type: 'start',
      index: s.index,
      config: o.config,
      logLevel: o.logger.level,
      ingest: { url: o.url, ...account, shareGroup: INGEST_SHARE_GROUP, batchSize: o.batchSize, batchWindowMs: o.batchWindowMs },
    } satisfies ToIngestWorker);
    return new Promise<void>((resolve, reject) => {
      let settled = false;
      const settle = (err: Error | null) => {
        if (settled) return;
        settled = true;
        clearTimeout(deadline);
        if (err) reject(err);
        else resolve();
      };
      const deadline = setTimeout(() => {
        child.kill('SIGKILL');
        settle(new Error(`ingest worker ${s.index} did not subscribe within ${CHILD_START_TIMEOUT_MS / 1000} s`));
      }, CHILD_START_TIMEOUT_MS);
      child.on('message', (raw: unknown) => {
        const parsed = FromIngestWorker.safeParse(raw);
        if (!parsed.success) {
          o.logger.warn({ worker: s.index, issues: parsed.error.issues.length }, 'malformed message from an ingest worker dropped');
          return;
        }
        const m = parsed.data;
        if (m.type === 'ready') {
          s.ready = true;
          s.started = true;
          s.restartDelay.reset();
          settle(null);
        } else if (m.type === 'failed') settle(new Error(`ingest worker ${s.index} failed to start: ${m.message}`));
        else if (m.type === 'synced') this.syncs.settle(m.id);
        else if (m.type === 'events') {
          for (const e of m.controllers) o.bus.emit('controller', e);
          for (const e of m.readings) o.bus.emit('reading', e);
        } else {
          s.accepted += m.accepted;
          if (m.accepted) o.metrics.accepted.inc(m.accepted);
          if (m.duplicates) o.metrics.duplicates.inc(m.duplicates);
          if (m.outages) o.metrics.dbOutages.inc(m.outages);
          for (const [reason, n] of Object.entries(m.rejected)) if (n > 0) o.metrics.rejected.inc({ reason }, n);
        }
      });
      child.on('error', (err) => o.logger.error({ worker: s.index, err: err.message }, 'ingest worker error'));
      child.once('exit', (code, signal) => {
        if (s.child === child) s.child = null;
        s.ready = false;
        settle(new Error(`ingest worker ${s.index} exited (${signal ?? code}) before it subscribed`));
        if (this.stopping || !s.started) return;
        this.scheduleRestart(s, code, signal);
      });
    });
  }

  private scheduleRestart(s: Slot, code: number | null, signal: NodeJS.Signals | null): void {
    if (s.restartTimer || this.stopping) return;
    const delay = s.restartDelay.next();
    this.o.logger.error({ worker: s.index, code, signal, restartInMs: delay }, 'an ingest worker died: starting it again');
    s.restartTimer = setTimeout(() => {
      s.restartTimer = null;
      if (this.stopping || s.child) return;
      this.restarts++;
      this.spawn(s).then(
        () => this.o.logger.info({ worker: s.index }, 'ingest worker started again'),
        (err: Error) => this.o.logger.error({ worker: s.index, err: err.message }, 'ingest worker restart failed'),
      );
    }, delay);
  }

  /**
   * Resolves once every running worker has committed what it holds and its events have reached
   * the server's bus (tests and the benchmark; a worker that does not answer in time is skipped).
   */
  async sync(): Promise<void> {
    await Promise.all(
      this.slots.map((s) => {
        const child = s.child;
        if (!child?.connected || !s.ready) return undefined;
        return this.syncs.ask(child, (id) => ({ type: 'sync', id }) satisfies ToIngestWorker);
      }),
    );
  }

  /** SIGKILLs worker `index` (1-based) as a crash would; the restart follows (tests). */
  kill(index: number): void {
    this.slots[index - 1]?.child?.kill('SIGKILL');
  }

  /** Stops every worker (each drains and disconnects) and waits until all have exited. */
  async stop(): Promise<void> {
    this.stopping = true;
    this.o.bus.off('boxChanged', this.onBox);
    this.o.bus.off('controllerRevoked', this.onRevoked);
    await Promise.all(
      this.slots.map(async (s) => {
        if (s.restartTimer) clearTimeout(s.restartTimer);
        s.restartTimer = null;
        await stopChild(s.child, { type: 'stop' } satisfies ToIngestWorker);
      }),
    );
    this.syncs.releaseAll();
  }
}
