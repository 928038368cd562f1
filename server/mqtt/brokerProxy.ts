/**
 * The server's side of an embedded broker that runs in its own process (MQTT_EMBEDDED_IN=process):
 * forks server/mqtt/brokerProcess.ts, hands it the broker's options and the database settings,
 * forwards controller revocations to it, takes its metrics and status back over the IPC channel,
 * and starts it again when it dies. The broker code itself is the same EmbeddedBroker as inline,
 * so the journal, the PUBACK after the durable append and the ACL are unchanged.
 */
import type { ChildProcess } from 'node:child_process';
import { z } from 'zod';
import type { Config } from '../config';
import type { TelemetryMetrics } from '../telemetry/metrics';
import type { BrokerHandle, BrokerOptions } from './broker';
import { CHILD_START_TIMEOUT_MS, forkTs, IpcRequests, RestartDelay, stopChild } from '../process/child';

/** The part of BrokerOptions that crosses to the broker process as data. */
export type BrokerProcessOptions = Omit<BrokerOptions, 'models' | 'bus' | 'metrics' | 'logger'>;

/** Messages from the server to the broker process. */
export type ToBrokerProcess =
  | { type: 'start'; options: BrokerProcessOptions; config: Config; logLevel: string }
  | { type: 'drop'; serial: string }
  /** Send your metrics now, then 'synced' with this id. */
  | { type: 'sync'; id: number }
  | { type: 'stop' };

/** Messages from the broker process to the server; checked on arrival (a bad one is logged and dropped). */
export const FromBrokerProcess = z.discriminatedUnion('type', [
  z.object({ type: z.literal('listening'), port: z.number().int().min(1).max(65535) }),
  z.object({ type: z.literal('failed'), message: z.string() }),
  z.object({ type: z.literal('synced'), id: z.number().int() }),
  z.object({
    type: z.literal('metrics'),
    /** Refusals since the previous metrics message, by reason. */
    refused: z.record(z.string(), z.number().int().min(0)),
    connectedControllers: z.number().int().min(0),
    queueDepth: z.number().int().min(0),
    stallRecoveries: z.number().int().min(0),
  }),
]);
export type FromBrokerProcess = z.infer<typeof FromBrokerProcess>;

const ENTRY = new URL('./brokerProcess.ts', import.meta.url);
/** A metrics read waits this long at most for the broker process's answer. */
const SYNC_TIMEOUT_MS = 1000;

export interface BrokerProxyOptions extends Omit<BrokerOptions, 'metrics'> {
  metrics: TelemetryMetrics;
  /** The server's config: the broker process opens its own small pool with its DB_* settings. */
  config: Config;
}

export class BrokerProxy implements BrokerHandle {
  private child: ChildProcess | null = null;
  private listening = false;
  /** stop() was called: an exit is expected and no restart follows. */
  private stopping = false;
  /** The process listened at least once since start(): from then on a death means a restart. */
  private started = false;
  private restartTimer: NodeJS.Timeout | null = null;
  private readonly restartDelay = new RestartDelay();
  private readonly onRevoked = ({ serial }: { serial: string }) => this.dropController(serial);
  port = 0;
  stallRecoveries = 0;
  /** Times the broker process died unexpectedly and was started again. */
  restarts = 0;
  /** The broker process's pid while it runs (the benchmark reads its CPU time). */
  get pid(): number | null {
    return this.child?.pid ?? null;
  }

  private readonly syncs = new IpcRequests(SYNC_TIMEOUT_MS);

  constructor(private readonly o: BrokerProxyOptions) {
    // A read of the broker's metrics (GET /metrics, a test) first asks the broker process for its
    // counts: the IPC channel keeps order, so everything the broker counted before the read began
    // (a refusal sent before it closed a socket, say) is in the figures read. prom-client awaits a
    // metric's collect() in get().
    for (const m of [o.metrics.refused, o.metrics.connectedControllers, o.metrics.brokerQueueDepth]) Object.assign(m, { collect: () => this.sync() });
  }

  /** Resolves once the broker process has sent its current metrics (at once when it is not running). */
  private sync(): Promise<void> {
    const child = this.child;
    if (!child?.connected || !this.listening) return Promise.resolve();
    return this.syncs.ask(child, (id) => ({ type: 'sync', id }) satisfies ToBrokerProcess);
  }

  /** Forks the broker process; resolves its port once it listens. */
  async start(): Promise<number> {
    this.stopping = false;
    this.started = false;
    this.o.bus.off('controllerRevoked', this.onRevoked);
    this.o.bus.on('controllerRevoked', this.onRevoked);
    try {
      return await this.spawn();
    } catch (err) {
      this.o.bus.off('controllerRevoked', this.onRevoked);
      throw err;
    }
  }

  /** True while the broker process runs and listens. */
  get up(): boolean {
    return this.listening && this.child !== null;
  }

  private spawn(): Promise<number> {
    const o = this.o;
    const child = forkTs(ENTRY);
    this.child = child;
    const { models: _m, bus: _b, metrics: _x, logger: _l, config, ...options } = o;
    // A restart keeps the port the controllers know (the first start may ask for any free one).
    const start: ToBrokerProcess = { type: 'start', options: { ...options, port: this.port || options.port }, config, logLevel: o.logger.level };
    child.send(start);
    return new Promise<number>((resolve, reject) => {
      let settled = false;
      const settle = (err: Error | null, port = 0) => {
        if (settled) return;
        settled = true;
        clearTimeout(deadline);
        if (err) reject(err);
        else resolve(port);
      };
      const deadline = setTimeout(() => {
        child.kill('SIGKILL');
        settle(new Error(`the broker process did not listen within ${CHILD_START_TIMEOUT_MS / 1000} s`));
      }, CHILD_START_TIMEOUT_MS);
      child.on('message', (raw: unknown) => {
        const parsed = FromBrokerProcess.safeParse(raw);
        if (!parsed.success) {
          o.logger.warn({ issues: parsed.error.issues.length }, 'malformed message from the broker process dropped');
          return;
        }
        const m = parsed.data;
        if (m.type === 'listening') {
          this.port = m.port;
          this.listening = true;
          this.started = true;
          this.restartDelay.reset();
          settle(null, m.port);
        } else if (m.type === 'synced') {
          this.syncs.settle(m.id);
        } else if (m.type === 'failed') {
          settle(new Error(`the broker process failed to start: ${m.message}`));
        } else {
          for (const [reason, n] of Object.entries(m.refused)) if (n > 0) o.metrics.refused.inc({ reason }, n);
          o.metrics.connectedControllers.set(m.connectedControllers);
          o.metrics.brokerQueueDepth.set(m.queueDepth);
          this.stallRecoveries = m.stallRecoveries;
        }
      });
      child.on('error', (err) => o.logger.error({ err: err.message }, 'broker process error'));
      child.once('exit', (code, signal) => {
        if (this.child === child) this.child = null;
        this.listening = false;
        this.syncs.releaseAll();
        o.metrics.connectedControllers.set(0);
        settle(new Error(`the broker process exited (${signal ?? code}) before it listened`));
        // A first start that fails is the caller's error (start() rejects); no restart behind its back.
        if (this.stopping || !this.started) return;
        this.scheduleRestart(code, signal);
      });
    });
  }

  private scheduleRestart(code: number | null, signal: NodeJS.Signals | null): void {
    if (this.restartTimer || this.stopping) return;
    const delay = this.restartDelay.next();
    this.o.logger.error({ code, signal, restartInMs: delay }, 'the broker process died: starting it again');
    this.restartTimer = setTimeout(() => {
      this.restartTimer = null;
      if (this.stopping || this.child) return;
      this.restarts++;
      this.spawn().then(
        (port) => this.o.logger.info({ port }, 'broker process started again'),
        (err: Error) => {
          this.o.logger.error({ err: err.message }, 'broker process restart failed');
          // The exit handler of the failed process has scheduled the next attempt already.
        },
      );
    }, delay);
  }

  /** Drops every connection signed in as this controller (in the broker process). */
  dropController(serial: string): void {
    const child = this.child;
    if (child?.connected) child.send({ type: 'drop', serial } satisfies ToBrokerProcess);
  }

  /** Stops the broker process (it closes aedes and its journal) and waits until it has exited. */
  async stop(): Promise<void> {
    this.stopping = true;
    this.o.bus.off('controllerRevoked', this.onRevoked);
    if (this.restartTimer) clearTimeout(this.restartTimer);
    this.restartTimer = null;
    // The journal is synced per PUBACK, so a stop that ends in SIGKILL loses nothing acknowledged.
    await stopChild(this.child, { type: 'stop' } satisfies ToBrokerProcess);
  }
}
