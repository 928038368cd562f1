/**
 * Runs many simulated controllers against one broker, on one simulated clock, plus the demo-mode
 * fault channel: a separate privileged client subscribed to rimehold/v1/sim/fault.
 */
import mqtt, { type MqttClient } from 'mqtt';
import { z } from 'zod';
import { SimClock } from './clock';
import { SimController } from './controller';
import type { FleetController } from './fleetFile';
import { consoleLogger, type SimLogger } from './log';
import { FAULT_NAMES, THERMISTOR_NAMES, type FaultName, type ThermistorName } from './model/faults';
import { unsimulatedRefrigerant } from './model/settings';

/** Topic of fault commands in demo mode. */
export const SIM_FAULT_TOPIC = 'rimehold/v1/sim/fault';

/** A fault command on the fault channel (JSON). `sensor` picks the thermistor of a sensor fault. */
export const SimFaultCommand = z
  .object({ serial: z.string().min(1).max(40), fault: z.enum(FAULT_NAMES), on: z.boolean(), sensor: z.enum(THERMISTOR_NAMES).optional() })
  .strict();
export type SimFaultCommand = z.infer<typeof SimFaultCommand>;

export interface FleetOptions {
  controllers: FleetController[];
  /** Broker URL, e.g. mqtt://127.0.0.1:1883. */
  url: string;
  /** Telemetry interval, simulated s (default 10). */
  intervalS?: number;
  /** Simulated seconds per real second (default 1). */
  speed?: number;
  /** How far in the past the simulated clock starts, s (default 0; see clock.ts). */
  startAgoS?: number;
  /** Faults active from the start. */
  faults?: { serial: string; fault: FaultName; sensor?: ThermistorName }[];
  /** First seq of every controller (default: the real clock in ms at start, so a restarted sim never reuses a seq). */
  firstSeq?: number;
  /**
   * Subscribe to the fault channel (default true) with these credentials (default MQTT_SIM_USER /
   * MQTT_SIM_PASSWORD / MQTT_SIM_CLIENT_ID from the environment; no password, no fault channel).
   */
  faultChannel?: boolean;
  simUser?: string;
  simPassword?: string;
  /** The one client id the broker accepts for the simulator's account (default 'rimehold-sim'). */
  simClientId?: string;
  logger?: SimLogger;
  /** Real ms between model advances (default 200). */
  tickMs?: number;
  modelStepS?: number;
  bufferCapacity?: number;
  /** Where the models' t = 0 falls in the day, epoch ms (default: the sim clock's start); pins the kitchen schedule in tests. */
  modelStartMs?: number;
  /** How long a controller holds a PUBACKed reading for Rimehold's `committed` (default COMMIT_HOLD_MS; 0: not held). */
  holdMs?: number;
  reconnectMinMs?: number;
  reconnectMaxMs?: number;
}

export interface FleetStats {
  /** PUBACKed seqs per serial, in publish order. */
  published: Map<string, number[]>;
  /** Seqs waiting in each controller's buffer, oldest first. */
  buffered: Map<string, number[]>;
  /** Seqs PUBACKed but held until Rimehold names them as committed, oldest first. */
  held: Map<string, number[]>;
  /** Seqs Rimehold named as committed, in arrival order. */
  confirmed: Map<string, number[]>;
  /** Seqs dropped at the buffer bound per serial. */
  dropped: Map<string, number[]>;
  /** Simulated clock now, epoch ms. */
  simNowMs: number;
}

export interface Fleet {
  controllers: Map<string, SimController>;
  clock: SimClock;
  stats(): FleetStats;
  /** Applies a fault command; false when the serial is unknown. */
  setFault(cmd: SimFaultCommand): boolean;
  /** Advances every controller to the clock now (also done by the timer). */
  tick(): void;
  stop(): Promise<void>;
}

/** Starts a fleet: connects every controller and runs the clock until stop(). */
export async function startFleet(opts: FleetOptions): Promise<Fleet> {
  const logger = opts.logger ?? consoleLogger();
  const intervalS = opts.intervalS ?? 10;
  if (!(intervalS > 0)) throw new RangeError('intervalS must be > 0');
  const clock = new SimClock(opts.speed ?? 1, opts.startAgoS ?? 0);
  const firstSeq = opts.firstSeq ?? clock.realStartMs;
  const controllers = new Map<string, SimController>();
  for (const entry of opts.controllers) {
    // A box the model cannot simulate truthfully (R-744) is left out rather than faked.
    const unsimulated = unsimulatedRefrigerant(entry.refrigerant);
    if (unsimulated !== null) {
      logger.warn(`${entry.serial}: not simulated (${unsimulated})`);
      continue;
    }
    const c = new SimController({
      entry,
      url: opts.url,
      intervalS,
      simStartMs: clock.simStartMs,
      modelStartMs: opts.modelStartMs,
      firstSeq,
      logger,
      modelStepS: opts.modelStepS,
      bufferCapacity: opts.bufferCapacity,
      holdMs: opts.holdMs,
      reconnectMinMs: opts.reconnectMinMs,
      reconnectMaxMs: opts.reconnectMaxMs,
    });
    controllers.set(entry.serial, c);
  }
  const setFault = (cmd: SimFaultCommand): boolean => {
    const c = controllers.get(cmd.serial);
    if (!c) return false;
    c.setFault(cmd.fault, cmd.on, cmd.sensor);
    logger.info(`${cmd.serial}: fault ${cmd.fault}${cmd.sensor ? `(${cmd.sensor})` : ''} ${cmd.on ? 'on' : 'off'}`);
    return true;
  };
  for (const f of opts.faults ?? []) {
    if (!setFault({ ...f, on: true })) throw new Error(`--fault: no controller with serial ${f.serial}`);
  }
  for (const c of controllers.values()) c.start();
  const tick = () => {
    const now = clock.nowMs();
    for (const c of controllers.values()) c.advanceTo(now);
  };
  tick();
  const timer = setInterval(tick, opts.tickMs ?? 200);
  const simPassword = opts.simPassword ?? process.env.MQTT_SIM_PASSWORD;
  if (opts.faultChannel !== false && !simPassword) logger.warn('fault channel: no MQTT_SIM_PASSWORD in the environment, not connecting it');
  const faultClient = opts.faultChannel === false || !simPassword ? null : connectFaultChannel(opts, simPassword, setFault, logger);
  logger.info(`fleet: ${controllers.size} controllers → ${opts.url}, interval ${intervalS} s, speed ${clock.speed}×, sim clock starts ${new Date(clock.simStartMs).toISOString()}`);

  return {
    controllers,
    clock,
    setFault,
    tick,
    stats: () => ({
      published: new Map([...controllers].map(([s, c]) => [s, [...c.publishedSeqs]])),
      buffered: new Map([...controllers].map(([s, c]) => [s, c.buffer.toArray().map((r) => r.seq)])),
      held: new Map([...controllers].map(([s, c]) => [s, c.buffer.heldSeqs()])),
      confirmed: new Map([...controllers].map(([s, c]) => [s, [...c.confirmedSeqs]])),
      dropped: new Map([...controllers].map(([s, c]) => [s, [...c.droppedSeqs]])),
      simNowMs: clock.nowMs(),
    }),
    stop: async () => {
      clearInterval(timer);
      await Promise.all([...controllers.values()].map((c) => c.stop()));
      if (faultClient) await faultClient.endAsync(true).catch(() => undefined);
    },
  };
}

function connectFaultChannel(opts: FleetOptions, password: string, setFault: (cmd: SimFaultCommand) => boolean, logger: SimLogger): MqttClient {
  const client = mqtt.connect(opts.url, {
    clientId: opts.simClientId ?? process.env.MQTT_SIM_CLIENT_ID ?? 'rimehold-sim',
    username: opts.simUser ?? process.env.MQTT_SIM_USER ?? 'rimehold-sim',
    password,
    clean: true,
    protocolVersion: 4,
    reconnectPeriod: 5000,
  });
  client.on('connect', () => {
    client.subscribeAsync({ [SIM_FAULT_TOPIC]: { qos: 1 } }).then(
      () => logger.info(`fault channel: subscribed to ${SIM_FAULT_TOPIC}`),
      (err: Error) => logger.warn(`fault channel: subscription refused: ${err.message}`),
    );
  });
  client.on('error', (err) => logger.warn(`fault channel: ${err.message}`));
  client.on('message', (topic, payload) => {
    if (topic !== SIM_FAULT_TOPIC) return;
    let json: unknown;
    try {
      json = JSON.parse(payload.toString('utf8'));
    } catch {
      logger.warn('fault channel: dropped a message that is not JSON');
      return;
    }
    const parsed = SimFaultCommand.safeParse(json);
    if (!parsed.success) {
      logger.warn(`fault channel: dropped an invalid command: ${parsed.error.issues[0]?.message ?? ''}`);
      return;
    }
    if (!setFault(parsed.data)) logger.warn(`fault channel: no controller with serial ${parsed.data.serial}`);
  });
  return client;
}
