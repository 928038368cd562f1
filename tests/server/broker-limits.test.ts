import net from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import mqtt, { type MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { loadConfig } from '../../server/config';
import { topics } from '../../shared/schemas/telemetry';
import { connectController, metricValue, provisionBox, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

let srv: RunningServer;
let url: string;
let port: number;
// This server's limits (the defaults are larger; see docs/device-protocol.md).
const DEADLINE_MS = 1000;
const MAX_CONNECTIONS = 8;
const MAX_PENDING = 4;

beforeAll(async () => {
  srv = await startTelemetryServer({
    MQTT_CONNECT_DEADLINE_MS: String(DEADLINE_MS),
    MQTT_MAX_CONNECTIONS: String(MAX_CONNECTIONS),
    MQTT_MAX_PENDING_CONNECTS: String(MAX_PENDING),
    MQTT_INGEST_QUEUE_LIMIT: '100',
  });
  url = srv.mqttUrl ?? '';
  port = Number(new URL(url).port);
});
afterAll(async () => srv.stop());

/** MQTT remaining-length varint of n bytes. */
function varint(n: number): Buffer {
  const out: number[] = [];
  do {
    let b = n % 128;
    n = Math.floor(n / 128);
    if (n > 0) b |= 0x80;
    out.push(b);
  } while (n > 0);
  return Buffer.from(out);
}

/** A raw socket to the broker and a promise of its close with the ms it stayed open. */
function rawSocket(): Promise<{ socket: net.Socket; closed: Promise<number> }> {
  return new Promise((resolve, reject) => {
    const socket = net.createConnection({ host: '127.0.0.1', port });
    const t0 = Date.now();
    const closed = new Promise<number>((r) => socket.once('close', () => r(Date.now() - t0)));
    socket.on('error', () => undefined);
    socket.once('connect', () => resolve({ socket, closed }));
    socket.once('error', reject);
  });
}

const refused = (reason: string) => metricValue(srv, 'rimehold_broker_refused_total', { reason });

/** Waits for an mqtt.js client's socket to close (errors on the way are expected). */
const closeOf = (c: MqttClient) => {
  c.on('error', () => undefined);
  return new Promise<void>((r) => c.once('close', () => r()));
};

describe('packet size limits', () => {
  it('closes a socket whose CONNECT header claims 200 MiB before buffering it', async () => {
    const before = await refused('connect-too-large');
    const { socket, closed } = await rawSocket();
    // Fixed header of a CONNECT (type 1) with a remaining length of 200 MiB, then a little body.
    socket.write(Buffer.concat([Buffer.from([0x10]), varint(200 * 1024 * 1024), Buffer.alloc(1024, 0x41)]));
    const openMs = await closed;
    // Closed by the size gate, not by the CONNECT deadline.
    expect(await refused('connect-too-large')).toBe(before + 1);
    expect(openMs).toBeLessThan(DEADLINE_MS);
  });

  it('closes a socket whose CONNECT is one byte over the 1 KiB limit', async () => {
    const before = await refused('connect-too-large');
    const { socket, closed } = await rawSocket();
    socket.write(Buffer.concat([Buffer.from([0x10]), varint(1025)]));
    await closed;
    expect(await refused('connect-too-large')).toBe(before + 1);
  });

  it('closes a socket whose first packet is not a CONNECT', async () => {
    const before = await refused('first-not-connect');
    const { socket, closed } = await rawSocket();
    // PINGREQ (type 12), remaining length 0.
    socket.write(Buffer.from([0xc0, 0x00]));
    const openMs = await closed;
    expect(await refused('first-not-connect')).toBe(before + 1);
    expect(openMs).toBeLessThan(DEADLINE_MS);
  });

  it('closes a signed-in controller whose publish is one byte over the 8 KiB packet limit', async () => {
    const p = await provisionBox(srv);
    const before = await refused('packet-too-large');
    const c = await connectController(url, p.serial, p.secret);
    const closed = closeOf(c);
    const topic = topics.status(p.serial);
    // Remaining length = 2 + topic + 2 (packet id) + payload = 8193 bytes.
    c.publish(topic, Buffer.alloc(8193 - 4 - Buffer.byteLength(topic), 0x20), { qos: 1 });
    await closed;
    c.end(true);
    expect(await refused('packet-too-large')).toBe(before + 1);
  });

  it('closes a signed-in controller that sends a 20 MiB publish and stores nothing', async () => {
    const p = await provisionBox(srv);
    const before = await refused('packet-too-large');
    const c = await connectController(url, p.serial, p.secret);
    const closed = closeOf(c);
    c.publish(topics.telemetry(p.serial), Buffer.alloc(20 * 1024 * 1024, 0x20), { qos: 1, retain: true });
    await closed;
    c.end(true);
    expect(await refused('packet-too-large')).toBe(before + 1);
    await new Promise((r) => setTimeout(r, 300));
    expect(await storedRows(srv, p.box.id)).toHaveLength(0);
  });

  it('refuses retained telemetry', async () => {
    const p = await provisionBox(srv);
    const before = await refused('telemetry-retain');
    const c = await connectController(url, p.serial, p.secret);
    const closed = closeOf(c);
    c.publish(topics.telemetry(p.serial), JSON.stringify(reading()), { qos: 1, retain: true });
    await closed;
    c.end(true);
    expect(await refused('telemetry-retain')).toBe(before + 1);
    await new Promise((r) => setTimeout(r, 300));
    expect(await storedRows(srv, p.box.id)).toHaveLength(0);
  });
});

describe('QoS 0 telemetry', () => {
  it('refuses QoS 0 telemetry so a flood of it cannot fill the ingest queue for every controller', async () => {
    const a = await provisionBox(srv);
    const b = await provisionBox(srv);
    const before = await refused('telemetry-qos');
    const ca = await connectController(url, a.serial, a.secret);
    const closed = closeOf(ca);
    // As many QoS 0 messages as this server's MQTT_INGEST_QUEUE_LIMIT.
    for (let i = 0; i < 100; i++) ca.publish(topics.telemetry(a.serial), JSON.stringify(reading()), { qos: 0 });
    await closed;
    ca.end(true);
    expect(await refused('telemetry-qos')).toBe(before + 1);
    // Another controller's QoS 1 telemetry is still accepted and stored.
    const cb = await connectController(url, b.serial, b.secret);
    await publishTelemetry(cb, b.serial, reading());
    await waitFor(async () => (await storedRows(srv, b.box.id)).length === 1);
    await cb.endAsync();
    expect(await storedRows(srv, a.box.id)).toHaveLength(0);
  });
});

describe('connection limits', () => {
  it('closes a socket that has not completed CONNECT within the deadline', async () => {
    const before = await refused('connect-deadline');
    const { closed } = await rawSocket();
    const openMs = await closed;
    expect(await refused('connect-deadline')).toBe(before + 1);
    expect(openMs).toBeGreaterThanOrEqual(DEADLINE_MS - 50);
    expect(openMs).toBeLessThan(DEADLINE_MS + 1500);
  });

  it('closes sockets beyond the cap of pending CONNECTs at once', async () => {
    const before = await refused('max-pending-connects');
    const silent = await Promise.all(Array.from({ length: MAX_PENDING }, () => rawSocket()));
    const extra = await rawSocket();
    const openMs = await extra.closed;
    expect(openMs).toBeLessThan(DEADLINE_MS);
    expect(await refused('max-pending-connects')).toBe(before + 1);
    for (const s of silent) s.socket.destroy();
    await Promise.all(silent.map((s) => s.closed));
  });

  it('refuses connections beyond the connection cap and accepts again once one closes', async () => {
    // Let the previous test's sockets leave the broker's count.
    await new Promise((r) => setTimeout(r, 200));
    const before = await refused('max-connections');
    const clients: MqttClient[] = [];
    // The ingest holds one connection already.
    for (let i = 0; i < MAX_CONNECTIONS - 1; i++) {
      const p = await provisionBox(srv);
      clients.push(await connectController(url, p.serial, p.secret));
    }
    const p = await provisionBox(srv);
    const attempt = await new Promise<string>((resolve) => {
      const c = mqtt.connect(url, { clientId: `ctl-${p.serial}`, username: p.serial, password: p.secret, reconnectPeriod: 0, protocolVersion: 4 });
      c.once('connect', () => resolve('connected'));
      c.once('close', () => resolve('closed'));
      c.on('error', () => undefined);
    });
    expect(attempt).toBe('closed');
    expect(await refused('max-connections')).toBe(before + 1);
    await clients.pop()?.endAsync();
    await new Promise((r) => setTimeout(r, 200));
    const c = await connectController(url, p.serial, p.secret);
    await c.endAsync();
    await Promise.all(clients.map((x) => x.endAsync()));
  });
});

describe('limit defaults', () => {
  it('defaults to the limits docs/device-protocol.md states', () => {
    const c = loadConfig({});
    expect({
      connect: c.MQTT_MAX_CONNECT_BYTES,
      packet: c.MQTT_MAX_PACKET_BYTES,
      deadline: c.MQTT_CONNECT_DEADLINE_MS,
      connections: c.MQTT_MAX_CONNECTIONS,
      pending: c.MQTT_MAX_PENDING_CONNECTS,
      failures: c.MQTT_DEVICE_AUTH_FAILURES,
      lockout: c.MQTT_DEVICE_AUTH_LOCKOUT_S,
      unknown: c.MQTT_UNKNOWN_SERIAL_CACHE_S,
    }).toEqual({ connect: 1024, packet: 8192, deadline: 5000, connections: 10_000, pending: 1000, failures: 30, lockout: 60, unknown: 30 });
  });
});
