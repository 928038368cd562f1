/** Prometheus counters of the telemetry pipeline (prom-client), one registry per server. */
import { Counter, Gauge, Histogram, Registry, collectDefaultMetrics } from 'prom-client';

export type RejectReason = 'bad-json' | 'schema' | 'too-large' | 'unknown-serial' | 'disabled' | 'future-ts' | 'too-old' | 'topic';

/** Creates the registry and the pipeline's metrics. */
export function createTelemetryMetrics(withDefaults = true) {
  const registry = new Registry();
  if (withDefaults) collectDefaultMetrics({ register: registry, prefix: 'rimehold_' });
  const m = {
    registry,
    accepted: new Counter({ name: 'rimehold_ingest_readings_accepted_total', help: 'Readings committed to the database', registers: [registry] }),
    rejected: new Counter({ name: 'rimehold_ingest_readings_rejected_total', help: 'Telemetry messages rejected, by reason', labelNames: ['reason'], registers: [registry] }),
    duplicates: new Counter({ name: 'rimehold_ingest_readings_duplicate_total', help: 'Re-delivered readings already stored', registers: [registry] }),
    batchSize: new Histogram({ name: 'rimehold_ingest_batch_size', help: 'Readings per database batch', buckets: [1, 10, 50, 100, 250, 500, 1000, 2000], registers: [registry] }),
    insertSeconds: new Histogram({ name: 'rimehold_ingest_insert_seconds', help: 'Batch commit latency', buckets: [0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5], registers: [registry] }),
    queueDepth: new Gauge({ name: 'rimehold_ingest_queue_depth', help: 'Readings received but not yet committed', registers: [registry] }),
    brokerQueueDepth: new Gauge({ name: 'rimehold_broker_ingest_queue_depth', help: 'Telemetry accepted by the broker and not yet acknowledged by the ingest', registers: [registry] }),
    connectedControllers: new Gauge({ name: 'rimehold_broker_connected_controllers', help: 'Controllers connected to the embedded broker', registers: [registry] }),
    refused: new Counter({ name: 'rimehold_broker_refused_total', help: 'Connections, publishes and subscriptions the broker refused, by reason', labelNames: ['reason'], registers: [registry] }),
    dbOutages: new Counter({ name: 'rimehold_ingest_db_outages_total', help: 'Times the ingest paused because the database failed', registers: [registry] }),
  };
  return m;
}

export type TelemetryMetrics = ReturnType<typeof createTelemetryMetrics>;
