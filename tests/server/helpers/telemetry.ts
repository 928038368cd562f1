/** Helpers for telemetry tests: provision a controller, connect as it, wait for conditions. */
import { mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { randomUUID } from 'node:crypto';
import mqtt, { type MqttClient } from 'mqtt';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../../server/main';
import { hashDeviceSecret, newDeviceSecret } from '../../../server/controllers/secrets';
import { topics, type TelemetryPayload } from '../../../shared/schemas/telemetry';
import { factories, startTestServer } from './app';
import type { BoxCreateBody } from '../../../shared/schemas/boxes';
import { fleetEntryFor, type FleetBoxSettings, type FleetController } from '../../../simulator/fleetFile';

/** Starts a server with the embedded broker on a free port and its own broker store. */
export function startTelemetryServer(overrides: Record<string, string> = {}, persistenceDir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-broker-'))) {
  return startTestServer({ MQTT_PORT: '0', MQTT_PERSISTENCE_DIR: persistenceDir, ...overrides }, { telemetry: true, batchWindowMs: 20 });
}

/** A customer, site and box with a provisioned controller whose secret is known. */
export async function provisionBox(srv: RunningServer, box: Partial<BoxCreateBody> = {}, site: { elevationM?: number } = {}) {
  const f = factories(srv);
  const customer = await f.customer();
  const s = await f.site(customer.id, site);
  const b = await f.box(s.id, customer.id, box);
  const secret = newDeviceSecret();
  const serial = `T-${randomUUID().slice(0, 8)}`;
  const controller = await srv.ctx.models.Controller.create({ boxId: b.id, serial, secretHash: hashDeviceSecret(secret), valveFullSteps: 1600, firmware: null, lastSeenAt: null, secretRotatedAt: null });
  return { customer, site: s, box: b, controller, serial, secret };
}

/** Connects as a controller (client id ctl-{serial}); rejects on a refused CONNACK. */
export function connectController(url: string, serial: string, secret: string, extra: mqtt.IClientOptions = {}): Promise<MqttClient> {
  return new Promise((resolve, reject) => {
    const c = mqtt.connect(url, { clientId: `ctl-${serial}`, username: serial, password: secret, reconnectPeriod: 0, protocolVersion: 4, ...extra });
    c.once('connect', () => resolve(c));
    c.once('error', (e) => {
      c.end(true);
      reject(e);
    });
  });
}

let seqCounter = 1;
/** A valid telemetry payload (a cooler running at 2 °C). */
export function reading(over: Partial<TelemetryPayload> = {}): TelemetryPayload {
  return {
    seq: seqCounter++,
    ts: new Date().toISOString(),
    suctionKPaG: 250,
    suctionLineC: -2,
    boxAirC: 2.4,
    coilInletC: -7,
    valveSteps: 800,
    compressorOn: true,
    fanOn: true,
    defrostOn: false,
    doorOpen: false,
    ...over,
  };
}

/** Publishes a telemetry payload (object or raw string) at QoS 1. */
export async function publishTelemetry(c: MqttClient, serial: string, payload: TelemetryPayload | string | Buffer): Promise<void> {
  await c.publishAsync(topics.telemetry(serial), typeof payload === 'string' || Buffer.isBuffer(payload) ? payload : JSON.stringify(payload), { qos: 1 });
}

/** Polls until fn returns a truthy value or the timeout passes. */
export async function waitFor<T>(fn: () => Promise<T | null | undefined | false> | T | null | undefined | false, timeoutMs = 10_000, stepMs = 50): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const v = await fn();
    if (v) return v;
    if (Date.now() > deadline) throw new Error(`condition not met within ${timeoutMs} ms`);
    await new Promise((r) => setTimeout(r, stepMs));
  }
}

/** Stored raw rows of a box, oldest first. */
export async function storedRows(srv: RunningServer, boxId: number) {
  return srv.ctx.sequelize.query<Record<string, number | string | null>>('SELECT * FROM readings WHERE box_id = ? ORDER BY ts', { replacements: [boxId], type: QueryTypes.SELECT });
}

/** Value of a counter (summed over labels, or for one label set) in the server's registry. */
export async function metricValue(srv: RunningServer, name: string, labels: Record<string, string> = {}): Promise<number> {
  const m = await srv.ctx.metrics.registry.getSingleMetric(name)?.get();
  if (!m) return 0;
  return m.values.filter((v) => Object.entries(labels).every(([k, val]) => v.labels[k] === val)).reduce((a, v) => a + v.value, 0);
}

/** The simulator's fleet entry for a box and its controller (serial and secret as provisioned; sea level, 1,600 steps). */
export function fleetEntry(box: FleetBoxSettings, serial: string, secret: string): FleetController {
  return fleetEntryFor(box, { serial, secret, valveFullSteps: 1600 }, 0);
}
