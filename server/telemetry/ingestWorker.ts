/**
 * Entry of one ingest worker process (INGEST_WORKERS ≥ 2 with MQTT_BROKER=mosquitto), forked by
 * IngestWorkers (ingestWorkers.ts). It runs the same Ingest as the server, subscribed to the
 * telemetry only, through an MQTT 5 shared subscription with a persistent session of its own:
 * mosquitto spreads the readings over the workers, each reading is acknowledged after its commit.
 * Committed readings and controller-online changes go to the server over the IPC channel (the
 * server evaluates alarms and feeds the live sockets); box changes and revocations come back the
 * same way so the worker's box cache stays current. When the server goes away this process exits.
 */
import type { Sequelize } from 'sequelize';
import { createLogger } from '../logger';
import { createSequelize } from '../db/sequelize';
import { initModels } from '../models';
import { EventBus, type EventBusMap } from '../events/bus';
import { createTelemetryMetrics } from './metrics';
import { Ingest } from './ingest';
import { BoxCache } from './boxCache';
import { CommitStreams } from './writer';
import type { FromIngestWorker, ToIngestWorker } from './ingestWorkers';

if (!process.send) throw new Error('server/telemetry/ingestWorker.ts runs as a child of the server (INGEST_WORKERS)');

/** Box lookups and controller touches only: the writer has its own connections. */
const POOL_MAX = 2;
/** Counts go to the server this often (and before every 'synced'). */
const COUNTS_EVERY_MS = 500;

let ingest: Ingest | null = null;
let writer: CommitStreams | null = null;
let boxes: BoxCache | null = null;
let sequelize: Sequelize | null = null;
let stopping = false;
const bus = new EventBus();

function send(m: FromIngestWorker): void {
  if (!process.connected || !process.send) return;
  try {
    process.send(m);
  } catch {
    // The channel closed meanwhile: 'disconnect' ends this process.
  }
}

// Committed events leave in one message per turn of the event loop (a batch commits together).
let readings: EventBusMap['reading'][0][] = [];
let controllers: EventBusMap['controller'][0][] = [];
let scheduled = false;
function flushEvents(): void {
  scheduled = false;
  if (!readings.length && !controllers.length) return;
  send({ type: 'events', readings, controllers });
  readings = [];
  controllers = [];
}
function schedule(): void {
  if (scheduled) return;
  scheduled = true;
  setImmediate(flushEvents);
}
bus.on('reading', (e) => {
  readings.push(e);
  schedule();
});
bus.on('controller', (e) => {
  controllers.push(e);
  schedule();
});

const rejected = new Map<string, number>();
const sent = { accepted: 0, duplicates: 0, outages: 0 };
function flushCounts(): void {
  if (!ingest) return;
  const c = ingest.counts;
  send({ type: 'counts', accepted: c.accepted - sent.accepted, duplicates: c.duplicates - sent.duplicates, outages: c.outages - sent.outages, rejected: Object.fromEntries(rejected) });
  sent.accepted = c.accepted;
  sent.duplicates = c.duplicates;
  sent.outages = c.outages;
  rejected.clear();
}
setInterval(flushCounts, COUNTS_EVERY_MS).unref();

async function start(m: Extract<ToIngestWorker, { type: 'start' }>): Promise<void> {
  try {
    const logger = createLogger(m.logLevel, `rimehold-ingest-${m.index}`);
    sequelize = createSequelize({ ...m.config, DB_POOL_MAX: POOL_MAX }, logger);
    const models = initModels(sequelize);
    const metrics = createTelemetryMetrics(false);
    const inc = metrics.rejected.inc.bind(metrics.rejected);
    metrics.rejected.inc = ((labels: { reason: string }, n?: number) => {
      rejected.set(labels.reason, (rejected.get(labels.reason) ?? 0) + (n ?? 1));
      inc(labels, n);
    }) as typeof metrics.rejected.inc;
    writer = new CommitStreams(m.config, m.config.INGEST_COMMIT_STREAMS);
    boxes = new BoxCache(models, bus);
    ingest = new Ingest({ ...m.ingest, kinds: ['telemetry'], maxAgeDays: m.config.RETENTION_RAW_DAYS, models, bus, metrics, logger, writer, boxes });
    await ingest.start();
    send({ type: 'ready' });
  } catch (err) {
    send({ type: 'failed', message: err instanceof Error ? err.message : String(err) });
    setTimeout(() => process.exit(1), 50);
  }
}

async function stop(): Promise<void> {
  if (stopping) return;
  stopping = true;
  try {
    await ingest?.stop();
    flushEvents();
    flushCounts();
    boxes?.close();
    await writer?.close();
    await sequelize?.close();
  } finally {
    process.exit(0);
  }
}

process.on('message', (raw: unknown) => {
  const m = raw as Partial<ToIngestWorker> | null;
  if (!m || typeof m !== 'object') return;
  if (m.type === 'start' && !ingest) void start(m as Extract<ToIngestWorker, { type: 'start' }>);
  else if (m.type === 'boxChanged' && typeof m.boxId === 'number') bus.emit('boxChanged', { boxId: m.boxId });
  else if (m.type === 'controllerRevoked' && typeof m.serial === 'string' && (m.reason === 'disabled' || m.reason === 'rotated')) bus.emit('controllerRevoked', { serial: m.serial, reason: m.reason });
  else if (m.type === 'sync' && typeof m.id === 'number') {
    // Whatever is committed is drained first: the answer means "all I have is stored and sent".
    void (ingest?.drain(5000) ?? Promise.resolve()).then(() => {
      flushEvents();
      flushCounts();
      send({ type: 'synced', id: m.id as number });
    });
  } else if (m.type === 'stop') void stop();
});
process.on('disconnect', () => {
  if (!stopping) process.exit(1);
});
process.on('SIGINT', () => undefined);
process.on('SIGTERM', () => void stop());
