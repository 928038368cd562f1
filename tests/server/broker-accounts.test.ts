import net from 'node:net';
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import mqtt, { MqttClient, type IClientOptions } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { setDisabled, rotateSecret } from '../../server/controllers/service';
import { SIM_FAULT_TOPIC } from '../../server/mqtt/broker';
import { connectController, metricValue, provisionBox, startTelemetryServer } from './helpers/telemetry';

let srv: RunningServer;
let url: string;
let port: number;
// Failed device sign-ins from one address before it is locked out (this server's setting).
const FAILURES = 5;

beforeAll(async () => {
  // Inline: these tests count the broker's database lookups with a spy on this process's models.
  srv = await startTelemetryServer({ DEMO_MODE: '1', MQTT_EMBEDDED_IN: 'inline', MQTT_DEVICE_AUTH_FAILURES: String(FAILURES), MQTT_DEVICE_AUTH_LOCKOUT_S: '60' });
  url = srv.mqttUrl ?? '';
  port = Number(new URL(url).port);
});
afterAll(async () => srv.stop());
afterEach(() => {
  vi.restoreAllMocks();
});

/**
 * Connects with mqtt.js from a chosen loopback source address (the target is always 127.0.0.1);
 * resolves the client on CONNACK, rejects on a refusal or a closed socket.
 */
function connectFrom(localAddress: string, opts: IClientOptions): Promise<MqttClient> {
  return new Promise((resolve, reject) => {
    const c = new MqttClient(() => net.createConnection({ host: '127.0.0.1', port, localAddress }), { reconnectPeriod: 0, protocolVersion: 4, ...opts });
    c.once('connect', () => resolve(c));
    c.once('error', (e) => {
      c.end(true);
      reject(e);
    });
    c.once('close', () => reject(new Error('closed before CONNACK')));
  });
}

/** Connects with plain options; rejects on a refused CONNACK. */
function connect(opts: IClientOptions): Promise<MqttClient> {
  return new Promise((resolve, reject) => {
    const c = mqtt.connect(url, { reconnectPeriod: 0, protocolVersion: 4, ...opts });
    c.once('connect', () => resolve(c));
    c.once('error', (e) => {
      c.end(true);
      reject(e);
    });
  });
}

describe('service accounts', () => {
  it('refuses the simulator account under the ingest’s client id and leaves the ingest connected', async () => {
    const cfg = srv.ctx.config;
    await expect(connect({ clientId: cfg.MQTT_INGEST_CLIENT_ID, username: cfg.MQTT_SIM_USER, password: cfg.MQTT_SIM_PASSWORD })).rejects.toThrow(/Bad username or password/i);
    // The refused CONNECT never reached the session: the real ingest was not taken over.
    await new Promise((r) => setTimeout(r, 200));
    expect(srv.ingest?.connected).toBe(true);
  });

  it('refuses the simulator account under any client id but its own', async () => {
    const cfg = srv.ctx.config;
    await expect(connect({ clientId: `${cfg.MQTT_SIM_CLIENT_ID}-2`, username: cfg.MQTT_SIM_USER, password: cfg.MQTT_SIM_PASSWORD })).rejects.toThrow(/Bad username or password/i);
  });

  it('refuses the ingest’s credentials under another client id', async () => {
    const cfg = srv.ctx.config;
    await expect(connect({ clientId: 'rimehold-probe', username: cfg.MQTT_INGEST_USER, password: cfg.MQTT_INGEST_PASSWORD })).rejects.toThrow(/Bad username or password/i);
    expect(srv.ingest?.connected).toBe(true);
  });

  it('lets the simulator account subscribe to the fault topic and nothing else', async () => {
    const cfg = srv.ctx.config;
    const sim = await connect({ clientId: cfg.MQTT_SIM_CLIENT_ID, username: cfg.MQTT_SIM_USER, password: cfg.MQTT_SIM_PASSWORD });
    const granted = await sim.subscribeAsync({ [SIM_FAULT_TOPIC]: { qos: 1 } });
    expect(granted[0]?.qos).toBe(1);
    // mqtt.js rejects the promise when the broker answers 128 (refused) for a filter.
    await expect(sim.subscribeAsync({ 'rimehold/v1/ctl/+/telemetry': { qos: 1 } })).rejects.toThrow();
    await expect(sim.subscribeAsync({ '#': { qos: 1 } })).rejects.toThrow();
    await sim.endAsync();
  });

  it('generates the simulator’s password when none is configured', () => {
    // The default is random per process, never the public string it used to be.
    expect(srv.ctx.config.MQTT_SIM_PASSWORD).not.toBe('dev-only-sim-password');
    expect(srv.ctx.config.MQTT_SIM_PASSWORD.length).toBeGreaterThanOrEqual(32);
  });
});

describe('controller serials', () => {
  it('refuses a serial that matches the database only case-insensitively', async () => {
    const p = await provisionBox(srv);
    const lower = p.serial.toLowerCase();
    expect(lower).not.toBe(p.serial);
    await expect(connectController(url, lower, p.secret)).rejects.toThrow(/Bad username or password/i);
    // The exact serial still signs in.
    const c = await connectController(url, p.serial, p.secret);
    await c.endAsync();
  });

  it('refuses a serial with a trailing space', async () => {
    const p = await provisionBox(srv);
    await expect(connectController(url, `${p.serial} `, p.secret)).rejects.toThrow(/Bad username or password/i);
  });

  it('drops the signed-in connection when its controller is disabled', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const closed = new Promise<void>((r) => c.once('close', () => r()));
    await setDisabled(srv.ctx, p.controller, true);
    await closed;
    c.end(true);
    await expect(connectController(url, p.serial, p.secret)).rejects.toThrow(/Not authorized/i);
  });

  it('drops the signed-in connection when its secret is rotated', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const closed = new Promise<void>((r) => c.once('close', () => r()));
    const { deviceSecret } = await rotateSecret(srv.ctx, p.controller);
    await closed;
    c.end(true);
    const again = await connectController(url, p.serial, deviceSecret);
    await again.endAsync();
  });
});

describe('device sign-in costs', () => {
  it('refuses malformed usernames without a database query', async () => {
    const spy = vi.spyOn(srv.ctx.models.Controller, 'findOne');
    for (const username of ['a b', 'x'.repeat(41), '../etc', 'é-1001', 'ab']) {
      await expect(connectFrom('127.0.0.2', { clientId: `ctl-${username}`, username, password: 'whatever' })).rejects.toThrow();
    }
    expect(spy).not.toHaveBeenCalled();
  });

  it('refuses a wrong client id without a database query', async () => {
    const p = await provisionBox(srv);
    const spy = vi.spyOn(srv.ctx.models.Controller, 'findOne');
    await expect(connectFrom('127.0.0.3', { clientId: 'rimehold-ingest', username: p.serial, password: p.secret })).rejects.toThrow(/Not authorized/i);
    expect(spy).not.toHaveBeenCalled();
  });

  it('answers a repeated unknown serial from its cache', async () => {
    const spy = vi.spyOn(srv.ctx.models.Controller, 'findOne');
    const serial = `NOPE-${Date.now()}`;
    for (let i = 0; i < 3; i++) await expect(connectFrom('127.0.0.4', { clientId: `ctl-${serial}`, username: serial, password: 'whatever' })).rejects.toThrow(/Bad username or password/i);
    expect(spy).toHaveBeenCalledTimes(1);
  });

  it('refuses further device sign-ins from an address without a lookup after repeated failures', async () => {
    const p = await provisionBox(srv);
    const from = '127.0.0.5';
    for (let i = 0; i < FAILURES; i++) await expect(connectFrom(from, { clientId: `ctl-${p.serial}`, username: p.serial, password: `wrong-${i}` })).rejects.toThrow(/Bad username or password/i);
    const spy = vi.spyOn(srv.ctx.models.Controller, 'findOne');
    const lockedBefore = await metricValue(srv, 'rimehold_broker_refused_total', { reason: 'address-locked' });
    // Even the right secret is refused from that address for now, and costs no query.
    await expect(connectFrom(from, { clientId: `ctl-${p.serial}`, username: p.serial, password: p.secret })).rejects.toThrow(/Not authorized/i);
    expect(spy).not.toHaveBeenCalled();
    expect(await metricValue(srv, 'rimehold_broker_refused_total', { reason: 'address-locked' })).toBe(lockedBefore + 1);
    // Another address is not affected.
    const ok = await connectFrom('127.0.0.6', { clientId: `ctl-${p.serial}`, username: p.serial, password: p.secret });
    await ok.endAsync();
  });

  it('still admits a controller that signed in before from a locked address, so one bad device behind a shared address does not lock out the fleet', async () => {
    const good = await provisionBox(srv);
    const bad = await provisionBox(srv);
    const from = '127.0.0.8';
    const first = await connectFrom(from, { clientId: `ctl-${good.serial}`, username: good.serial, password: good.secret });
    await first.endAsync();
    for (let i = 0; i < FAILURES; i++) await expect(connectFrom(from, { clientId: `ctl-${bad.serial}`, username: bad.serial, password: `stale-${i}` })).rejects.toThrow(/Bad username or password/i);
    // The misbehaving device stays locked out, even with its right secret …
    await expect(connectFrom(from, { clientId: `ctl-${bad.serial}`, username: bad.serial, password: bad.secret })).rejects.toThrow(/Not authorized/i);
    // … while the device that signed in before from that address keeps working.
    const again = await connectFrom(from, { clientId: `ctl-${good.serial}`, username: good.serial, password: good.secret });
    await again.endAsync();
  });

  it('keeps service accounts working from a locked address', async () => {
    const from = '127.0.0.7';
    for (let i = 0; i < FAILURES; i++) await expect(connectFrom(from, { clientId: 'ctl-NOPE-LOCK', username: 'NOPE-LOCK', password: 'x' })).rejects.toThrow();
    const cfg = srv.ctx.config;
    const sim = await connectFrom(from, { clientId: cfg.MQTT_SIM_CLIENT_ID, username: cfg.MQTT_SIM_USER, password: cfg.MQTT_SIM_PASSWORD });
    await sim.endAsync();
  });
});
