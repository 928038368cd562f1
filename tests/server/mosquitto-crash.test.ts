/**
 * The mosquitto loss window, closed end to end. mosquitto acknowledges a reading when it is in
 * memory and saves its state only every MOSQUITTO_AUTOSAVE_S, so a crash loses what it acknowledged
 * since its last save. Rimehold names each committed seq on the controller's `committed` topic, and
 * a controller holds an acknowledged reading until then, sending it again at its next connection
 * (and when an ingest announces it has subscribed afresh). Here, with two ingest workers:
 * the workers are stopped, two simulated controllers publish, mosquitto is SIGKILLed long before its
 * first save, then mosquitto and Rimehold come back. The holding controller's readings are all stored,
 * once each; the controller that does not hold (the control) loses what mosquitto had only in memory.
 */
import { mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import mqtt from 'mqtt';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { findMosquitto, MosquittoInstance } from '../../scripts/lib/mosquitto';
import { startFleet, type Fleet } from '../../simulator/fleet';
import { factories, startTestServer } from './helpers/app';
import { call, expectStatus, signInRoles, type Session } from './helpers/roles';
import { fleetEntry, reading, waitFor } from './helpers/telemetry';
import { topics } from '../../shared/schemas/telemetry';

const MISSING = findMosquitto() === null;
if (MISSING) console.warn('tests/server/mosquitto-crash.test.ts skipped: mosquitto is not installed (apt-get install mosquitto)');

const quiet = { info: () => {}, warn: () => {}, error: () => {} };
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const dataDir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-mq-crash-'));
// The longest save interval Rimehold allows: nothing published in this test is ever saved before the crash.
const AUTOSAVE_S = '300';
const mosquitto = new MosquittoInstance({ dataDir, port: 0, maxPacketBytes: 8192, maxConnections: 1000, maxQueuedMessages: 100_000, autosaveS: Number(AUTOSAVE_S), log: () => undefined });
let srv: RunningServer;
let admin: Session;
const fleets: Fleet[] = [];

async function startRimehold(): Promise<void> {
  srv = await startTestServer({ MQTT_BROKER: 'mosquitto', MQTT_PORT: String(mosquitto.port), MOSQUITTO_DIR: dataDir, MOSQUITTO_AUTOSAVE_S: AUTOSAVE_S, INGEST_WORKERS: '2' }, { telemetry: true, batchWindowMs: 20 });
  const customer = await factories(srv).customer();
  admin = (await signInRoles(srv, customer.id)).admin;
}

async function provisioned(tag: string) {
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id);
  const box = await f.box(site.id, customer.id);
  const serial = `C-${tag}-${Math.random().toString(36).slice(2, 8)}`;
  const res = await call(admin, 'post', '/api/v1/controllers', { boxId: box.id, serial });
  expectStatus(res, 201);
  return { box, serial, secret: res.body.deviceSecret as string };
}

async function storedSeqs(boxId: number): Promise<number[]> {
  const rows = await srv.ctx.sequelize.query<{ seq: number | string }>('SELECT seq FROM readings WHERE box_id = ? ORDER BY seq', { replacements: [boxId], type: QueryTypes.SELECT });
  return rows.map((r) => Number(r.seq));
}

beforeAll(async () => {
  if (MISSING) return;
  await mosquitto.start();
  await startRimehold();
}, 120_000);
afterAll(async () => {
  if (MISSING) return;
  for (const f of fleets) await f.stop();
  await srv?.stop();
  await mosquitto.stop(true);
});

describe.skipIf(MISSING)('a mosquitto crash with readings it acknowledged but never saved', () => {
  it('loses none of a holding controller’s readings, while one that does not hold loses them', async () => {
    const holding = await provisioned('hold');
    const control = await provisioned('nohold');
    // The probe: the workers take readings (their shared subscription is in place).
    const probe = await mqtt.connectAsync(`mqtt://127.0.0.1:${mosquitto.port}`, { clientId: `ctl-${holding.serial}`, username: holding.serial, password: holding.secret, protocolVersion: 4, reconnectPeriod: 0 });
    await probe.publishAsync(topics.telemetry(holding.serial), JSON.stringify(reading({ seq: 1 })), { qos: 1 });
    await probe.endAsync();
    await waitFor(async () => (await storedSeqs(holding.box.id)).includes(1), 20_000, 100);

    // Arrange: Rimehold stops; mosquitto keeps the workers' sessions in memory and acknowledges what comes.
    await srv.stop();
    const start = { url: `mqtt://127.0.0.1:${mosquitto.port}`, speed: 600, startAgoS: 300, intervalS: 10, faultChannel: false, reconnectMinMs: 100, reconnectMaxMs: 500, logger: quiet, tickMs: 50 } as const;
    const withHold = await startFleet({ ...start, controllers: [fleetEntry(holding.box, holding.serial, holding.secret)], firstSeq: 100 });
    const withoutHold = await startFleet({ ...start, controllers: [fleetEntry(control.box, control.serial, control.secret)], firstSeq: 100, holdMs: 0 });
    fleets.push(withHold, withoutHold);
    const published = (f: Fleet, serial: string) => f.stats().published.get(serial) ?? [];
    await waitFor(() => published(withHold, holding.serial).length >= 30 && published(withoutHold, control.serial).length >= 30, 20_000, 50);
    const heldBefore = withHold.stats().held.get(holding.serial) ?? [];
    expect(heldBefore.length).toBeGreaterThanOrEqual(30); // nothing could confirm them

    // Act: mosquitto dies without saving, comes back, and so does Rimehold.
    await mosquitto.crash();
    const lostWindow = new Set(published(withoutHold, control.serial));
    await mosquitto.start();
    await startRimehold();
    // The workers subscribe afresh and say so; the controllers send what they hold, and hear it committed.
    await waitFor(() => {
      const confirmed = new Set(withHold.stats().confirmed.get(holding.serial));
      return heldBefore.every((q) => confirmed.has(q));
    }, 30_000, 100);
    await sleep(500);
    for (const f of fleets.splice(0)) await f.stop();

    // Assert: every reading the holding controller had acknowledged is stored, exactly once.
    const want = published(withHold, holding.serial);
    const stored = await waitFor(
      async () => {
        const s = await storedSeqs(holding.box.id);
        return want.every((q) => s.includes(q)) ? s : null;
      },
      30_000,
      200,
    );
    expect(stored.length).toBe(new Set(stored).size);
    // The control, on the same ingest that stored all of the above: what mosquitto had acknowledged
    // only in memory is gone for a controller that let go at the PUBACK.
    expect(lostWindow.size).toBeGreaterThanOrEqual(30);
    const controlStored = await storedSeqs(control.box.id);
    expect([...lostWindow].filter((q) => controlStored.includes(q))).toEqual([]);
  }, 120_000);
});
