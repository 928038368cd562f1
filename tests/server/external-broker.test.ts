import { mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import type { RunningServer } from '../../server/main';
import { EmbeddedBroker } from '../../server/mqtt/broker';
import { EventBus } from '../../server/events/bus';
import { createTelemetryMetrics } from '../../server/telemetry/metrics';
import { createLogger } from '../../server/logger';
import { createSequelize } from '../../server/db/sequelize';
import { initModels } from '../../server/models';
import { startTestServer, testConfig } from './helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, storedRows, waitFor } from './helpers/telemetry';

// The scale-out path: MQTT_URL points the ingest at a broker outside the server process.
let broker: EmbeddedBroker;
let srv: RunningServer;
const config = testConfig();
const sequelize = createSequelize(config);

beforeAll(async () => {
  broker = new EmbeddedBroker({
    host: '127.0.0.1',
    port: 0,
    persistenceDir: mkdtempSync(path.join(os.tmpdir(), 'rimehold-ext-broker-')),
    ingestUser: config.MQTT_INGEST_USER,
    ingestPassword: config.MQTT_INGEST_PASSWORD,
    simUser: null,
    simPassword: null,
    ingestQueueLimit: 1000,
    models: initModels(sequelize),
    bus: new EventBus(),
    metrics: createTelemetryMetrics(false),
    logger: createLogger('silent'),
  });
  const port = await broker.start();
  srv = await startTestServer({ MQTT_URL: `mqtt://127.0.0.1:${port}` }, { telemetry: true, batchWindowMs: 20 });
});
afterAll(async () => {
  await srv.stop();
  await broker.stop();
  await sequelize.close();
});

describe('ingest from an external broker (MQTT_URL)', () => {
  it('embeds no broker and stores what controllers publish to the external one', async () => {
    expect(srv.broker).toBeNull();
    const health = await request(srv.server).get('/api/v1/health').expect(200);
    expect(health.body).toMatchObject({ brokerMode: 'external', broker: 'up' });
    const p = await provisionBox(srv);
    const c = await connectController(`mqtt://127.0.0.1:${broker.port}`, p.serial, p.secret);
    const r = reading();
    await publishTelemetry(c, p.serial, r);
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length ? rs : null;
    });
    expect(Number(rows[0]?.seq)).toBe(r.seq);
    await c.endAsync();
  });
});
