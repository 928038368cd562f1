import { Aedes } from 'aedes';
import { createServer, type Server } from 'node:net';
import mqtt, { type MqttClient } from 'mqtt';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { ConfigAckPayload, MAX_TELEMETRY_BYTES, TelemetryPayload, topics } from '../../shared/schemas/telemetry';
import { startFleet, type Fleet } from '../../simulator/fleet';
import type { FleetController } from '../../simulator/fleetFile';
import { memoryLogger } from '../../simulator/log';

const ENTRY: FleetController = {
  serial: 'SIM-IT-1', secret: 'it-secret-1', boxId: 1, kind: 'cooler', valveType: 'eev', refrigerant: 'R-448A',
  setpointC: 2, differentialK: 2, superheatTargetK: 4, valveFullSteps: 1600, elevationM: 200, defrostType: 'off-cycle',
  defrostIntervalH: 6, defrostMaxMin: 30, defrostTerminationC: 5, dripMin: 2, fanDelayMin: 0,
};
const TXV_ENTRY: FleetController = { ...ENTRY, serial: 'SIM-IT-2', secret: 'it-secret-2', boxId: 2, valveType: 'txv', superheatTargetK: 5 };

interface Seen {
  topic: string;
  text: string;
  retain: boolean;
}

let broker: Aedes;
let server: Server;
let url: string;
let observer: MqttClient;
let seen: Seen[];
let logins: { clientId: string; username?: string; password?: string }[];
let fleet: Fleet | null;

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
async function until(cond: () => boolean, ms = 5000): Promise<void> {
  const end = Date.now() + ms;
  while (!cond()) {
    if (Date.now() > end) throw new Error('condition not met in time');
    await sleep(20);
  }
}
const telemetryOf = (serial: string) =>
  seen.filter((s) => s.topic === topics.telemetry(serial)).map((s) => TelemetryPayload.parse(JSON.parse(s.text)));

beforeEach(async () => {
  broker = await Aedes.createBroker();
  logins = [];
  broker.authenticate = (client, username, password, done) => {
    logins.push({ clientId: client.id, username, password: password?.toString() });
    done(null, true);
  };
  server = createServer(broker.handle);
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
  url = `mqtt://127.0.0.1:${(server.address() as { port: number }).port}`;
  seen = [];
  observer = await mqtt.connectAsync(url, { clientId: 'it-observer', reconnectPeriod: 0 });
  observer.on('message', (topic, payload, packet) => seen.push({ topic, text: payload.toString(), retain: packet.retain }));
  await observer.subscribeAsync({ 'rimehold/v1/ctl/#': { qos: 1 } });
  fleet = null;
});

afterEach(async () => {
  await fleet?.stop();
  await observer.endAsync(true);
  await new Promise<void>((r) => broker.close(() => r()));
  await new Promise<void>((r) => server.close(() => r()));
});

describe('a simulated controller on a real broker', () => {
  it('logs in as itself, sets status online (retained) and publishes valid telemetry in seq order', async () => {
    fleet = await startFleet({ controllers: [ENTRY, TXV_ENTRY], url, speed: 600, startAgoS: 1800, faultChannel: false, firstSeq: 0, logger: memoryLogger(), tickMs: 50 });
    await until(() => telemetryOf(ENTRY.serial).length >= 40 && telemetryOf(TXV_ENTRY.serial).length >= 40);

    expect(logins).toContainEqual({ clientId: 'ctl-SIM-IT-1', username: 'SIM-IT-1', password: 'it-secret-1' });
    const raw = seen.filter((s) => s.topic === topics.telemetry(ENTRY.serial));
    for (const s of raw) expect(Buffer.byteLength(s.text)).toBeLessThanOrEqual(MAX_TELEMETRY_BYTES);
    const readings = telemetryOf(ENTRY.serial);
    expect(readings.map((r) => r.seq)).toEqual(readings.map((_, i) => i));
    for (const r of readings) expect(r.ts).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/);
    expect(Date.parse(readings.at(-1)?.ts ?? '')).toBeLessThanOrEqual(Date.now());
    expect(readings.every((r) => Number.isInteger(r.valveSteps))).toBe(true);
    expect(telemetryOf(TXV_ENTRY.serial).every((r) => r.valveSteps === undefined)).toBe(true);

    // A client that subscribes later is handed the retained status.
    const late = await mqtt.connectAsync(url, { clientId: 'it-late', reconnectPeriod: 0 });
    const retained: Seen[] = [];
    late.on('message', (topic, payload, packet) => retained.push({ topic, text: payload.toString(), retain: packet.retain }));
    await late.subscribeAsync({ [topics.status(ENTRY.serial)]: { qos: 1 } });
    await until(() => retained.length > 0);
    expect(retained[0]).toEqual({ topic: topics.status(ENTRY.serial), text: 'online', retain: true });
    await late.endAsync(true);

    const stats = fleet.stats();
    expect(stats.published.get(ENTRY.serial)?.slice(0, readings.length)).toEqual(readings.map((r) => r.seq));
  });

  it('has the broker publish its will (offline, retained) when the connection dies without a DISCONNECT', async () => {
    fleet = await startFleet({ controllers: [ENTRY], url, speed: 60, faultChannel: false, logger: memoryLogger() });
    await until(() => seen.some((s) => s.topic === topics.status(ENTRY.serial) && s.text === 'online'));
    fleet.controllers.get(ENTRY.serial)?.kill();
    await until(() => seen.some((s) => s.topic === topics.status(ENTRY.serial) && s.text === 'offline'));
    expect(broker.connectedClients).toBe(1); // only the observer is left
  });

  it('leaves an R-744 box of the fleet file unsimulated, with a warning, and runs the others', async () => {
    // The model has no gas cooler or cascade (simulator/model/settings.ts): an R-744 box would be a fake.
    const logger = memoryLogger();
    const co2: FleetController = { ...ENTRY, serial: 'SIM-IT-744', secret: 'it-secret-744', boxId: 3, kind: 'freezer', refrigerant: 'R-744', setpointC: -20 };
    fleet = await startFleet({ controllers: [co2, ENTRY], url, speed: 60, faultChannel: false, logger });
    expect([...fleet.controllers.keys()]).toEqual([ENTRY.serial]);
    expect(logger.lines).toContain('warn SIM-IT-744: not simulated (R-744 (CO₂) systems are not simulated: the model has no gas cooler, flash tank or cascade)');
    await until(() => seen.some((s) => s.topic === topics.status(ENTRY.serial) && s.text === 'online'));
    expect(seen.some((s) => s.topic.includes('SIM-IT-744'))).toBe(false);
  });

  it('answers config/set with the applied values, refuses what it cannot apply, and drops junk without an id', async () => {
    const logger = memoryLogger();
    fleet = await startFleet({ controllers: [ENTRY, TXV_ENTRY], url, speed: 60, faultChannel: false, logger });
    await until(() => seen.filter((s) => s.topic.endsWith('/status') && s.text === 'online').length === 2);
    await sleep(100); // the controller subscribes right after announcing itself
    await observer.publishAsync(topics.configSet(ENTRY.serial), JSON.stringify({ id: 'cfg-1', setpointC: 3.5, defrost: { dripMin: 4 } }), { qos: 1 });
    await observer.publishAsync(topics.configSet(TXV_ENTRY.serial), JSON.stringify({ id: 'cfg-2', superheatTargetK: 6 }), { qos: 1 });
    await observer.publishAsync(topics.configSet(ENTRY.serial), JSON.stringify({ id: 'cfg-3', setpointC: 'warm' }), { qos: 1 });
    await observer.publishAsync(topics.configSet(ENTRY.serial), 'not json at all', { qos: 1 });
    await until(() => seen.filter((s) => s.topic.endsWith('/config/ack')).length >= 3);
    await sleep(200);
    const acks = seen.filter((s) => s.topic.endsWith('/config/ack')).map((s) => ConfigAckPayload.parse(JSON.parse(s.text)));
    expect(acks).toHaveLength(3);
    expect(acks.find((a) => a.id === 'cfg-1')).toEqual({ id: 'cfg-1', ok: true, applied: { setpointC: 3.5, defrost: { dripMin: 4 } } });
    expect(acks.find((a) => a.id === 'cfg-2')).toMatchObject({ ok: false, applied: {}, error: expect.stringMatching(/thermostatic/) });
    expect(acks.find((a) => a.id === 'cfg-3')).toMatchObject({ ok: false, error: expect.stringMatching(/^invalid config: setpointC/) });
    expect(fleet.controllers.get(ENTRY.serial)?.model.params.setpointC).toBe(3.5);
    expect(fleet.controllers.get(ENTRY.serial)?.model.params.dripMin).toBe(4);
    expect(logger.lines.some((l) => l.includes('dropped config/set without a usable id'))).toBe(true);
  });

  it('buffers through an outage and replays in order with the original seq and ts', async () => {
    fleet = await startFleet({ controllers: [ENTRY], url, speed: 600, startAgoS: 3600, faultChannel: false, firstSeq: 1000, logger: memoryLogger(), tickMs: 50 });
    const ctl = fleet.controllers.get(ENTRY.serial);
    if (!ctl) throw new Error('controller missing');
    await until(() => telemetryOf(ENTRY.serial).length >= 20);
    fleet.setFault({ serial: ENTRY.serial, fault: 'offline', on: true });
    await until(() => seen.some((s) => s.topic === topics.status(ENTRY.serial) && s.text === 'offline'));
    await until(() => ctl.buffer.size >= 50);
    const waiting = ctl.buffer.toArray();
    fleet.setFault({ serial: ENTRY.serial, fault: 'offline', on: false });
    await until(() => telemetryOf(ENTRY.serial).some((r) => r.seq > (waiting.at(-1)?.seq ?? 0) + 5));

    const got = telemetryOf(ENTRY.serial);
    const seqs = got.map((r) => r.seq);
    // First deliveries come in seq order with none missing; readings acknowledged but never named
    // committed (no ingest here) are sent again after the reconnect (the ingest stores them once).
    const unique = [...new Set(seqs)];
    expect(unique).toEqual(unique.map((_, i) => 1000 + i));
    for (const w of waiting) expect(got.find((r) => r.seq === w.seq)?.ts).toBe(w.ts);
    const statuses = seen.filter((s) => s.topic === topics.status(ENTRY.serial)).map((s) => s.text);
    expect(statuses.slice(-2)).toEqual(['offline', 'online']);
    // The controller counts each seq once, when its PUBACK arrives; every one of them reached the subscriber.
    const published = fleet.stats().published.get(ENTRY.serial) ?? [];
    for (let i = 1; i < published.length; i++) expect(published[i]).toBeGreaterThan(published[i - 1] ?? 0);
    await sleep(200);
    const observed = new Set(telemetryOf(ENTRY.serial).map((r) => r.seq));
    expect(published.filter((q) => !observed.has(q))).toEqual([]);
    expect(fleet.stats().dropped.get(ENTRY.serial)).toEqual([]);
  });

  it('holds acknowledged readings until they are named committed, and sends the unconfirmed ones again on the next connection', async () => {
    fleet = await startFleet({ controllers: [ENTRY], url, speed: 600, startAgoS: 600, faultChannel: false, firstSeq: 0, logger: memoryLogger(), tickMs: 50 });
    const ctl = fleet.controllers.get(ENTRY.serial);
    if (!ctl) throw new Error('controller missing');
    const cut = async () => {
      fleet?.setFault({ serial: ENTRY.serial, fault: 'offline', on: true });
      await until(() => !ctl.isConnected);
    };
    const reconnect = async () => {
      fleet?.setFault({ serial: ENTRY.serial, fault: 'offline', on: false });
      await until(() => ctl.isConnected);
    };
    const count = (q: number) => telemetryOf(ENTRY.serial).filter((r) => r.seq === q).length;
    await until(() => telemetryOf(ENTRY.serial).length >= 10);
    await cut();
    const published = [...ctl.publishedSeqs];
    // The broker acknowledged them all, yet nothing named them committed: every one is still held.
    expect(ctl.buffer.heldSeqs()).toEqual(published);
    await reconnect();
    await until(() => count(published.at(-1) ?? -1) >= 2);
    // The ingest names the first four as committed; a malformed message is ignored.
    observer.publish(topics.committed(ENTRY.serial), 'not json', { qos: 0 });
    observer.publish(topics.committed(ENTRY.serial), JSON.stringify({ seqs: published.slice(0, 4) }), { qos: 0 });
    await until(() => ctl.confirmedSeqs.length >= 4);
    expect(ctl.buffer.heldSeqs().slice(0, published.length - 4)).toEqual(published.slice(4));
    await cut();
    const before = seen.length;
    await reconnect();
    await until(() => count(published.at(-1) ?? -1) >= 3);
    // The held readings came again, oldest first; the confirmed four did not come a third time.
    // (Readings sent just before the cut may reach the observer after it, so only these seqs are compared.)
    const resent = seen.slice(before).filter((x) => x.topic === topics.telemetry(ENTRY.serial)).map((x) => TelemetryPayload.parse(JSON.parse(x.text)).seq);
    expect(resent.filter((q) => published.includes(q))).toEqual(published.slice(4));
    for (const q of published.slice(0, 4)) expect(count(q)).toBe(2);
    expect(ctl.publishedSeqs.slice(0, published.length)).toEqual(published); // a resend is not a new publish
    // Once everything sent is named committed, nothing sent is held.
    const all = [...new Set(telemetryOf(ENTRY.serial).map((r) => r.seq))];
    observer.publish(topics.committed(ENTRY.serial), JSON.stringify({ seqs: all.slice(0, 500) }), { qos: 0 });
    await until(() => ctl.buffer.heldSeqs().every((q) => !all.includes(q)));
    expect(ctl.buffer.heldSeqs().filter((q) => all.includes(q))).toEqual([]);
  });
});
