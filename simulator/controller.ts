/**
 * One simulated valve controller on MQTT: owns a box model, its own MQTT client (clientId ctl-{serial}),
 * the telemetry loop, the outage buffer and replay, config/set handling, and status with a last will.
 * Readings are published one at a time at QoS 1. A PUBACKed reading is held until Rimehold names its
 * seq on the controller's `committed` topic (or COMMIT_HOLD_MS has passed) and is sent again on the
 * next connection while held, so a broker that acknowledged it and then crashed before saving it
 * does not lose it; order and seq survive reconnects (a resend keeps its seq).
 */
import mqtt, { type MqttClient } from 'mqtt';
import { COMMIT_HOLD_MS, CommittedPayload, ConfigAckPayload, ConfigSetPayload, INGEST_READY_TOPIC, TelemetryPayload, topics } from '../shared/schemas/telemetry';
import { bufferBoundFor24h, ReadingBuffer } from './buffer';
import type { FleetController } from './fleetFile';
import type { SimLogger } from './log';
import { BoxModel, type BoxReading } from './model/box';
import type { FaultName, ThermistorName } from './model/faults';
import { boxParams } from './model/params';
import { seedFromString } from './model/rng';
import { checkSettings } from './model/settings';

export interface ControllerOptions {
  entry: FleetController;
  url: string;
  /** Telemetry interval, simulated s. */
  intervalS: number;
  /** Epoch ms of the model's t = 0 (the fleet clock's simulated start). */
  simStartMs: number;
  /**
   * Where the model's t = 0 falls in the day (its kitchen schedule: ambient, doors, deliveries), epoch
   * ms; default simStartMs. Tests pin it so a run behaves the same whatever the hour it runs at.
   */
  modelStartMs?: number;
  firstSeq: number;
  logger: SimLogger;
  seed?: number;
  /** Model integration step, simulated s (≤ 2). */
  modelStepS?: number;
  bufferCapacity?: number;
  /** How long a PUBACKed reading is held for Rimehold's `committed` (default COMMIT_HOLD_MS; 0: not held). */
  holdMs?: number;
  reconnectMinMs?: number;
  reconnectMaxMs?: number;
}

const STATE_KEYS = ['compressorOn', 'fanOn', 'defrostOn', 'doorOpen'] as const;

/** A simulated controller; construct, then start(), advance with advanceTo(), stop(). */
export class SimController {
  readonly serial: string;
  readonly model: BoxModel;
  readonly buffer: ReadingBuffer;
  /** Seqs the broker acknowledged, in publish order (a resend of a held reading is not counted again). */
  readonly publishedSeqs: number[] = [];
  /** Seqs Rimehold named as committed, in arrival order. */
  readonly confirmedSeqs: number[] = [];
  /** Seqs dropped at the buffer bound, oldest first. */
  readonly droppedSeqs: number[] = [];
  /** Config/set ids answered, with their result. */
  readonly configAcks: ConfigAckPayload[] = [];
  private nextSeq: number;
  private nextIntervalS: number;
  private lastState: Record<(typeof STATE_KEYS)[number], boolean> | null = null;
  private client: MqttClient | null = null;
  private connected = false;
  private lost: (() => void) | null = null;
  private lostPromise: Promise<void> = Promise.resolve();
  private pumping = false;
  private stopping = false;
  private offline = false;
  private reconnectTimer: NodeJS.Timeout | null = null;
  private reconnectDelayMs: number;
  private readonly opts: ControllerOptions;

  constructor(opts: ControllerOptions) {
    this.opts = opts;
    const e = opts.entry;
    this.serial = e.serial;
    const params = boxParams({
      ...e,
      startEpochMs: opts.modelStartMs ?? opts.simStartMs,
      defrostHardware: e.defrostType === 'off-cycle' ? (e.kind === 'freezer' ? 'electric' : 'none') : e.defrostType,
    });
    this.model = new BoxModel(params, opts.seed ?? seedFromString(e.serial));
    this.buffer = new ReadingBuffer(
      opts.bufferCapacity ?? bufferBoundFor24h(opts.intervalS),
      (r, total) => {
        this.droppedSeqs.push(r.seq);
        if (total === 1 || total % 100 === 0) {
          opts.logger.warn(`${this.serial}: buffer full (${this.buffer.capacity} readings): dropped oldest seq ${r.seq} (${total} dropped so far)`);
        }
      },
      opts.holdMs ?? COMMIT_HOLD_MS,
    );
    this.nextSeq = opts.firstSeq;
    this.nextIntervalS = 0;
    this.reconnectDelayMs = opts.reconnectMinMs ?? 1000;
  }

  /** True while the MQTT session is up. */
  get isConnected(): boolean {
    return this.connected;
  }

  /** Connects (in the background; readings buffer until the broker answers). */
  start(): void {
    this.stopping = false;
    this.connect();
  }

  /** Steps the model up to simulated epoch ms, emitting a reading at each interval and on each state change. */
  advanceTo(simMs: number): void {
    const targetS = (simMs - this.opts.simStartMs) / 1000;
    const stepS = Math.min(2, this.opts.modelStepS ?? 1);
    if (this.lastState === null) this.emit();
    while (this.model.tS < targetS - 1e-9) {
      const toInterval = this.nextIntervalS - this.model.tS;
      const dt = Math.min(stepS, targetS - this.model.tS, toInterval > 1e-9 ? toInterval : stepS);
      this.model.step(dt);
      const m = this.model;
      const now = { compressorOn: m.compressorOn, fanOn: m.fanOn, defrostOn: m.defrostOn, doorOpen: m.phys.doorOpen };
      const changed = STATE_KEYS.some((k) => this.lastState?.[k] !== now[k]);
      if (changed || m.tS >= this.nextIntervalS - 1e-9) this.emit();
    }
  }

  /** Turns a fault on or off; `offline` drops the connection abruptly (the broker sends the will). */
  setFault(fault: FaultName, on: boolean, sensor?: ThermistorName): void {
    if (fault !== 'offline') {
      this.model.setFault(fault, on, sensor);
      return;
    }
    if (on && !this.offline) {
      this.offline = true;
      this.opts.logger.info(`${this.serial}: offline fault on: dropping the connection, buffering readings`);
      this.clearReconnect();
      this.client?.end(true);
    } else if (!on && this.offline) {
      this.offline = false;
      this.opts.logger.info(`${this.serial}: offline fault cleared: reconnecting to replay ${this.buffer.size} readings`);
      if (!this.stopping) this.connect();
    }
  }

  /** Ends the connection abruptly, as a power cut would (no DISCONNECT, so the broker publishes the will). */
  kill(): void {
    this.stopping = true;
    this.clearReconnect();
    this.client?.end(true);
  }

  /** Stops cleanly: publishes status offline (retained) and disconnects. */
  async stop(): Promise<void> {
    this.stopping = true;
    this.clearReconnect();
    const client = this.client;
    if (!client) return;
    if (this.connected) {
      await raceTimeout(client.publishAsync(topics.status(this.serial), 'offline', { qos: 1, retain: true }), 2000).catch(() => undefined);
    }
    await raceTimeout(client.endAsync(false), 2000).catch(() => client.end(true));
  }

  private emit(reading: BoxReading = this.model.reading()): void {
    const tsMs = this.opts.simStartMs + Math.round(this.model.tS * 1000);
    const candidate = { seq: this.nextSeq, ts: new Date(tsMs).toISOString(), ...reading };
    const parsed = TelemetryPayload.safeParse(candidate);
    if (!parsed.success) {
      this.opts.logger.error(`${this.serial}: reading failed the telemetry schema, not sent: ${parsed.error.issues[0]?.message ?? ''}`);
      return;
    }
    this.nextSeq += 1;
    while (this.nextIntervalS <= this.model.tS + 1e-9) this.nextIntervalS += this.opts.intervalS;
    this.lastState = { compressorOn: reading.compressorOn, fanOn: reading.fanOn, defrostOn: reading.defrostOn, doorOpen: reading.doorOpen };
    this.buffer.release();
    this.buffer.push(parsed.data);
    void this.pump();
  }

  private connect(): void {
    if (this.offline || this.stopping) return;
    const e = this.opts.entry;
    const client = mqtt.connect(this.opts.url, {
      clientId: `ctl-${e.serial}`,
      username: e.serial,
      password: e.secret,
      clean: true,
      protocolVersion: 4,
      reconnectPeriod: 0, // this class reconnects itself, so a dead client never resends anything
      connectTimeout: 10_000,
      keepalive: 30,
      will: { topic: topics.status(e.serial), payload: Buffer.from('offline'), qos: 1, retain: true },
    });
    this.client = client;
    this.lostPromise = new Promise<void>((resolve) => (this.lost = resolve));
    client.on('connect', () => void this.onConnect(client));
    client.on('message', (topic, payload) => void this.onMessage(topic, payload));
    client.on('error', (err) => this.opts.logger.warn(`${this.serial}: mqtt error: ${err.message}`));
    client.on('close', () => {
      if (this.client !== client) return;
      const was = this.connected;
      this.connected = false;
      this.lost?.();
      if (was) this.opts.logger.info(`${this.serial}: disconnected; ${this.buffer.waiting} readings waiting, ${this.buffer.held} held until committed`);
      this.scheduleReconnect();
    });
  }

  private async onConnect(client: MqttClient): Promise<void> {
    try {
      await client.publishAsync(topics.status(this.serial), 'online', { qos: 1, retain: true });
      await client.subscribeAsync({ [topics.configSet(this.serial)]: { qos: 1 }, [topics.committed(this.serial)]: { qos: 0 }, [INGEST_READY_TOPIC]: { qos: 0 } });
    } catch (err) {
      this.opts.logger.warn(`${this.serial}: setup after connect failed: ${(err as Error).message}`);
      client.end(true);
      return;
    }
    if (this.client !== client) return;
    this.connected = true;
    this.reconnectDelayMs = this.opts.reconnectMinMs ?? 1000;
    // Held readings may be gone from a broker that crashed since it acknowledged them: send them again first.
    const again = this.buffer.requeue();
    if (this.buffer.size > 1) this.opts.logger.info(`${this.serial}: connected; replaying ${this.buffer.size} buffered readings in order (${again} acknowledged before but not yet committed)`);
    void this.pump();
  }

  /** Rimehold has these readings: stop holding them. A malformed message is logged and ignored. */
  private onCommitted(payload: Buffer): void {
    const json = jsonOf(payload);
    const parsed = CommittedPayload.safeParse(json);
    if (!parsed.success) {
      this.opts.logger.warn(`${this.serial}: ignored a malformed committed message`);
      return;
    }
    this.buffer.confirm(parsed.data.seqs);
    this.confirmedSeqs.push(...parsed.data.seqs);
  }

  /** Sends buffered readings oldest first, one at a time, each awaited to its PUBACK. */
  private async pump(): Promise<void> {
    if (this.pumping) return;
    this.pumping = true;
    try {
      while (this.connected && this.client) {
        const reading = this.buffer.peek();
        if (!reading) break;
        const client = this.client;
        const sent = await Promise.race([
          client.publishAsync(topics.telemetry(this.serial), JSON.stringify(reading), { qos: 1 }).then(
            () => true,
            () => false,
          ),
          this.lostPromise.then(() => false),
        ]);
        if (!sent || this.client !== client) break;
        if (this.buffer.ack(reading.seq)) this.publishedSeqs.push(reading.seq);
      }
    } finally {
      this.pumping = false;
    }
  }

  private async onMessage(topic: string, payload: Buffer): Promise<void> {
    if (topic === topics.committed(this.serial)) return this.onCommitted(payload);
    if (topic === INGEST_READY_TOPIC) {
      // An ingest subscribed afresh: what was sent since the broker came back may have found no one.
      const again = this.buffer.requeue();
      if (again > 0) this.opts.logger.info(`${this.serial}: ingest ready: sending ${again} unconfirmed readings again`);
      void this.pump();
      return;
    }
    if (topic !== topics.configSet(this.serial)) return;
    const json = jsonOf(payload);
    const parsed = ConfigSetPayload.safeParse(json);
    if (!parsed.success) {
      const id = idOf(json);
      const issue = parsed.error.issues[0];
      const reason = json === undefined ? 'not JSON' : `${issue?.path.join('.') ?? ''}: ${issue?.message ?? 'invalid'}`;
      if (id === null) {
        this.opts.logger.warn(`${this.serial}: dropped config/set without a usable id (${reason})`);
        return;
      }
      await this.ack({ id, ok: false, applied: {}, error: `invalid config: ${reason}`.slice(0, 200) });
      return;
    }
    const { id, ...request } = parsed.data;
    const result = checkSettings(this.model, request);
    if (!result.ok) {
      await this.ack({ id, ok: false, applied: {}, error: result.error.slice(0, 200) });
      return;
    }
    this.model.applySettings(result.settings);
    this.opts.logger.info(`${this.serial}: applied config ${id}: ${JSON.stringify(result.applied)}`);
    await this.ack({ id, ok: true, applied: result.applied });
  }

  private async ack(ack: ConfigAckPayload): Promise<void> {
    const checked = ConfigAckPayload.parse(ack);
    this.configAcks.push(checked);
    try {
      await this.client?.publishAsync(topics.configAck(this.serial), JSON.stringify(checked), { qos: 1 });
    } catch (err) {
      this.opts.logger.warn(`${this.serial}: config ack ${ack.id} not sent: ${(err as Error).message}`);
    }
  }

  private scheduleReconnect(): void {
    if (this.stopping || this.offline || this.reconnectTimer) return;
    const max = this.opts.reconnectMaxMs ?? 30_000;
    const delay = Math.min(max, this.reconnectDelayMs) * (0.75 + 0.5 * Math.random());
    this.reconnectDelayMs = Math.min(max, this.reconnectDelayMs * 2);
    this.reconnectTimer = setTimeout(() => {
      this.reconnectTimer = null;
      this.connect();
    }, delay);
  }

  private clearReconnect(): void {
    if (this.reconnectTimer) clearTimeout(this.reconnectTimer);
    this.reconnectTimer = null;
  }
}

function idOf(json: unknown): string | null {
  if (typeof json !== 'object' || json === null || !('id' in json)) return null;
  const id = (json as { id: unknown }).id;
  return typeof id === 'string' && id.length >= 1 && id.length <= 64 ? id : null;
}

function raceTimeout<T>(p: Promise<T>, ms: number): Promise<T> {
  return Promise.race([p, new Promise<T>((_, reject) => setTimeout(() => reject(new Error('timeout')), ms).unref())]);
}

/** The payload parsed as JSON, or undefined when it is not JSON. */
function jsonOf(payload: Buffer): unknown {
  try {
    return JSON.parse(payload.toString('utf8'));
  } catch {
    return undefined;
  }
}
