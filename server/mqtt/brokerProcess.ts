/**
 * Entry of the embedded broker's own process (MQTT_EMBEDDED_IN=process), forked by BrokerProxy
 * (brokerProxy.ts). Runs the same EmbeddedBroker as inline mode with its own small database pool
 * for device sign-in, takes 'drop' and 'stop' from the server and sends back its listening port
 * and its metrics (refusals by reason, connected controllers, the ingest queue depth). When the
 * server goes away (its IPC channel closes, a SIGKILL included) this process exits at once, so
 * the port is free for the next server; the journal is synced before every PUBACK, so nothing
 * acknowledged depends on a clean stop.
 */
import type { Sequelize } from 'sequelize';
import { createLogger } from '../logger';
import { createSequelize } from '../db/sequelize';
import { initModels } from '../models';
import { EventBus } from '../events/bus';
import { EmbeddedBroker, type BrokerMetrics } from './broker';
import type { FromBrokerProcess, ToBrokerProcess } from './brokerProxy';

if (!process.send) throw new Error('server/mqtt/brokerProcess.ts runs as a child of the server (MQTT_EMBEDDED_IN=process)');

/** Sign-in needs one query per CONNECT: two connections are plenty. */
const POOL_MAX = 2;
/** The queue depth gauge is sent at most this often; refusals and connection counts at once. */
const DEPTH_EVERY_MS = 100;

let broker: EmbeddedBroker | null = null;
let sequelize: Sequelize | null = null;
let stopping = false;

function send(m: FromBrokerProcess): void {
  if (!process.connected || !process.send) return;
  try {
    process.send(m);
  } catch {
    // The channel closed meanwhile: 'disconnect' ends this process.
  }
}

const refused = new Map<string, number>();
let connected = 0;
let queueDepth = 0;
let flushTimer: NodeJS.Timeout | null = null;
let sentStalls = 0;

function flushMetrics(): void {
  if (flushTimer) clearTimeout(flushTimer);
  flushTimer = null;
  sentStalls = broker?.stallRecoveries ?? sentStalls;
  send({ type: 'metrics', refused: Object.fromEntries(refused), connectedControllers: connected, queueDepth, stallRecoveries: sentStalls });
  refused.clear();
}

/**
 * now: refusals and connection counts go out at once, before aedes answers the client, so the
 * count normally reaches the server before the client has its answer. The queue depth changes
 * with every message: it goes out at most every DEPTH_EVERY_MS.
 */
function scheduleMetrics(now: boolean): void {
  if (now) return flushMetrics();
  if (!flushTimer) flushTimer = setTimeout(flushMetrics, DEPTH_EVERY_MS);
}

const metrics: BrokerMetrics = {
  refused: {
    inc({ reason }) {
      refused.set(reason, (refused.get(reason) ?? 0) + 1);
      scheduleMetrics(true);
    },
  },
  brokerQueueDepth: {
    set(value) {
      queueDepth = value;
      scheduleMetrics(false);
    },
  },
  connectedControllers: {
    inc() {
      connected++;
      scheduleMetrics(true);
    },
    dec() {
      connected = Math.max(0, connected - 1);
      scheduleMetrics(true);
    },
  },
};

// The stall watchdog counts its recoveries without a metric: report a change within a second.
setInterval(() => {
  if (broker && broker.stallRecoveries !== sentStalls) scheduleMetrics(true);
}, 1000).unref();

async function start(m: Extract<ToBrokerProcess, { type: 'start' }>): Promise<void> {
  try {
    const logger = createLogger(m.logLevel, 'rimehold-broker');
    sequelize = createSequelize({ ...m.config, DB_POOL_MAX: POOL_MAX }, logger);
    const models = initModels(sequelize);
    // Revocations come from the server as 'drop' messages; this bus only satisfies the options.
    broker = new EmbeddedBroker({ ...m.options, models, bus: new EventBus(), metrics, logger });
    const port = await broker.start();
    send({ type: 'listening', port });
  } catch (err) {
    send({ type: 'failed', message: err instanceof Error ? err.message : String(err) });
    setTimeout(() => process.exit(1), 50);
  }
}

async function stop(): Promise<void> {
  if (stopping) return;
  stopping = true;
  try {
    await broker?.stop();
    await sequelize?.close();
  } finally {
    process.exit(0);
  }
}

process.on('message', (raw: unknown) => {
  const m = raw as Partial<ToBrokerProcess> | null;
  if (!m || typeof m !== 'object') return;
  if (m.type === 'start' && !broker) void start(m as Extract<ToBrokerProcess, { type: 'start' }>);
  else if (m.type === 'drop' && typeof m.serial === 'string') broker?.dropController(m.serial);
  else if (m.type === 'sync' && typeof m.id === 'number') {
    // Everything counted so far goes out before the answer (the channel keeps order).
    flushMetrics();
    send({ type: 'synced', id: m.id });
  } else if (m.type === 'stop') void stop();
});
// The server is gone (a SIGKILL closes the channel too): leave at once and free the port.
process.on('disconnect', () => {
  if (!stopping) process.exit(1);
});
// Ctrl-C reaches the whole process group: the server stops this process itself (a 'stop' message).
process.on('SIGINT', () => undefined);
process.on('SIGTERM', () => void stop());
