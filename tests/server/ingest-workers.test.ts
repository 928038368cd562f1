/**
 * INGEST_WORKERS=2 with MQTT_BROKER=mosquitto: two ingest processes share the telemetry through
 * an MQTT 5 shared subscription. The delivery promise checked here is the device protocol's
 * (docs/device-protocol.md): a reading whose PUBACK the controller received is stored exactly once,
 * through a worker crash and a clean mosquitto restart (docs/scale-out.md states the gap that remains).
 */
import { mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import mqtt, { type MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { findMosquitto, MosquittoInstance } from '../../scripts/lib/mosquitto';
import { loadConfig } from '../../server/config';
import { topics } from '../../shared/schemas/telemetry';
import { factories, startTestServer } from './helpers/app';
import { call, expectStatus, signInRoles, type Session } from './helpers/roles';
import { reading, storedRows, waitFor } from './helpers/telemetry';

const MISSING = findMosquitto() === null;
if (MISSING) console.warn('tests/server/ingest-workers.test.ts skipped: mosquitto is not installed (apt-get install mosquitto)');

const dataDir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-workers-'));
const mosquitto = new MosquittoInstance({ dataDir, port: 0, maxPacketBytes: 8192, maxConnections: 1000, maxQueuedMessages: 100_000, autosaveS: 1, log: () => undefined });
let srv: RunningServer;
let admin: Session;
let url = '';

/** A box and a controller provisioned through the API (so mosquitto has its account). */
async function provisioned(tag: string) {
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id);
  const box = await f.box(site.id, customer.id);
  const serial = `W-${tag}-${Math.random().toString(36).slice(2, 8)}`;
  const res = await call(admin, 'post', '/api/v1/controllers', { boxId: box.id, serial });
  expectStatus(res, 201);
  return { box, serial, secret: res.body.deviceSecret as string };
}

/** A controller that reconnects by itself (as a real one does) and keeps unacknowledged messages. */
function device(serial: string, secret: string): Promise<MqttClient> {
  return mqtt.connectAsync(url, { clientId: `ctl-${serial}`, username: serial, password: secret, protocolVersion: 4, clean: false, reconnectPeriod: 200, connectTimeout: 5000 });
}

/** Publishes seq first..last of one controller, one every `gapMs`; returns the seqs whose PUBACK came. */
async function publishRun(c: MqttClient, serial: string, seqs: number[], gapMs: number): Promise<Set<number>> {
  const acked = new Set<number>();
  const sends: Array<Promise<void>> = [];
  for (const seq of seqs) {
    const payload = JSON.stringify(reading({ seq, ts: new Date().toISOString() }));
    sends.push(
      c.publishAsync(topics.telemetry(serial), payload, { qos: 1 }).then(
        () => void acked.add(seq),
        () => undefined,
      ),
    );
    await new Promise((r) => setTimeout(r, gapMs));
  }
  // Whatever is still in flight is sent again on reconnect: give it time to be acknowledged.
  await Promise.race([Promise.all(sends), new Promise((r) => setTimeout(r, 20_000))]);
  return acked;
}

async function startRimehold(): Promise<void> {
  srv = await startTestServer({ MQTT_BROKER: 'mosquitto', MQTT_PORT: String(mosquitto.port), MOSQUITTO_DIR: dataDir, MOSQUITTO_AUTOSAVE_S: '1', INGEST_WORKERS: '2' }, { telemetry: true, batchWindowMs: 20 });
  const customer = await factories(srv).customer();
  admin = (await signInRoles(srv, customer.id)).admin;
}

/** Connects as the box's controller, publishes `count` readings from seq `first`, disconnects; returns the acknowledged seqs. */
async function connectAndPublish(b: { serial: string; secret: string }, first: number, count: number): Promise<Set<number>> {
  const c = await device(b.serial, b.secret);
  const acked = await publishRun(c, b.serial, Array.from({ length: count }, (_, k) => first + k), 2);
  await c.endAsync();
  return acked;
}

beforeAll(async () => {
  if (MISSING) return;
  await mosquitto.start();
  url = `mqtt://127.0.0.1:${mosquitto.port}`;
  await startRimehold();
}, 120_000);
afterAll(async () => {
  if (MISSING) return;
  await srv?.stop();
  await mosquitto.stop(true);
});

describe('the INGEST_WORKERS setting', () => {
  it('refuses more than one worker without mosquitto, naming the variable', () => {
    expect(() => loadConfig({ NODE_ENV: 'test', INGEST_WORKERS: '2' })).toThrow(/INGEST_WORKERS: more than 1 needs MQTT_BROKER=mosquitto/);
    expect(() => loadConfig({ NODE_ENV: 'test', INGEST_WORKERS: '0' })).toThrow(/INGEST_WORKERS/);
    expect(loadConfig({ NODE_ENV: 'test' }).INGEST_WORKERS).toBe(1);
  });
});

describe.skipIf(MISSING)('two ingest workers on mosquitto', () => {
  it('spread the readings of several controllers over both workers, and every reading reaches the server bus once', async () => {
    const boxes = await Promise.all([1, 2, 3, 4].map((i) => provisioned(`s${i}`)));
    const ids = new Set(boxes.map((b) => b.box.id));
    const onBus: string[] = [];
    const listener = (e: { boxId: number; reading: { seq: number } }) => {
      if (ids.has(e.boxId)) onBus.push(`${e.boxId}:${e.reading.seq}`);
    };
    srv.ctx.bus.on('reading', listener as never);
    const before = srv.ingestWorkers?.acceptedByWorker ?? [];
    try {
      const runs = await Promise.all(
        boxes.map(async (b, i) => {
          const c = await device(b.serial, b.secret);
          const acked = await publishRun(c, b.serial, Array.from({ length: 30 }, (_, k) => 1000 * (i + 1) + k), 5);
          await c.endAsync();
          return acked;
        }),
      );
      expect(runs.map((r) => r.size)).toEqual([30, 30, 30, 30]);
      for (const b of boxes) await waitFor(async () => (await storedRows(srv, b.box.id)).length === 30, 15_000);
      await srv.ingestWorkers?.sync();
      const after = srv.ingestWorkers?.acceptedByWorker ?? [];
      const share = after.map((n, i) => n - (before[i] ?? 0));
      // mosquitto hands a shared subscription's messages round-robin: both workers took part.
      expect(share.length).toBe(2);
      expect(share.every((n) => n > 0)).toBe(true);
      expect(share.reduce((a, n) => a + n, 0)).toBeGreaterThanOrEqual(120);
      await waitFor(() => onBus.length >= 120, 5000);
      expect(onBus.length).toBe(120);
      expect(new Set(onBus).size).toBe(120);
    } finally {
      srv.ctx.bus.off('reading', listener as never);
    }
  }, 60_000);

  it('store every acknowledged reading exactly once through a worker killed mid-load', async () => {
    const boxes = await Promise.all([1, 2, 3, 4, 5, 6].map((i) => provisioned(`n${i}`)));
    const clients = await Promise.all(boxes.map((b) => device(b.serial, b.secret)));
    const seqs = Array.from({ length: 120 }, (_, k) => k + 1);
    const restartsBefore = srv.ingestWorkers?.restarts ?? 0;
    const runs = Promise.all(boxes.map((b, i) => publishRun(clients[i] as MqttClient, b.serial, seqs, 15)));
    // About a third in, a worker crashes (SIGKILL: nothing flushed, nothing acknowledged by it after that).
    await new Promise((r) => setTimeout(r, 600));
    srv.ingestWorkers?.kill(1);
    const acked = await runs;
    await Promise.all(clients.map((c) => c.endAsync()));
    // The killed worker came back under its own client id (mosquitto kept its session).
    await waitFor(() => (srv.ingestWorkers?.restarts ?? 0) > restartsBefore && srv.ingestWorkers?.up === true, 30_000, 100);
    for (const [i, b] of boxes.entries()) {
      const want = acked[i] as Set<number>;
      // mosquitto acknowledges on receipt, so every publish of the run is acknowledged.
      expect(want.size).toBe(seqs.length);
      await expectStoredOnce(b.box.id, want, `box ${i + 1}`);
    }
  }, 120_000);

  it('after a clean mosquitto restart, deliver what was queued for the stopped workers and take new readings again', async () => {
    const boxes = await Promise.all([1, 2, 3].map((i) => provisioned(`r${i}`)));
    await srv.stop();
    // No ingest runs: the workers' sessions keep what arrives (mosquitto saves it at the clean stop).
    const queued = await Promise.all(boxes.map((b) => connectAndPublish(b, 1, 20)));
    await mosquitto.stop();
    await mosquitto.start();
    await startRimehold();
    // mosquitto 2.0 restores the sessions but not their shared subscriptions: the workers subscribe again.
    const later = await Promise.all(boxes.map((b) => connectAndPublish(b, 101, 20)));
    for (const [i, b] of boxes.entries()) await expectStoredOnce(b.box.id, new Set([...(queued[i] ?? []), ...(later[i] ?? [])]), `box ${i + 1}`);
  }, 120_000);
});

/** Waits until every seq in `want` is stored for the box, then checks none is stored twice. */
async function expectStoredOnce(boxId: number, want: Set<number>, label: string): Promise<void> {
  let missing: number[] = [];
  const rows = await waitFor(
    async () => {
      const rs = await storedRows(srv, boxId);
      const got = new Set(rs.map((r) => Number(r.seq)));
      missing = [...want].filter((s) => !got.has(s));
      return missing.length === 0 ? rs : null;
    },
    30_000,
    200,
  ).catch((err: Error) => {
    throw new Error(`${err.message}: ${label} lacks ${missing.length} acknowledged seqs (${missing.slice(0, 20).join(', ')})`);
  });
  const stored = rows.map((r) => Number(r.seq));
  expect(stored.length).toBe(new Set(stored).size);
}
