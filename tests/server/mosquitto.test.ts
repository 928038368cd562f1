/**
 * MQTT_BROKER=mosquitto: Debian's mosquitto with accounts kept by Rimehold over the
 * dynamic-security control topic. Each test checks what a device sees on the wire.
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import mqtt, { type MqttClient } from 'mqtt';
import { Aedes } from 'aedes';
import { DYNSEC_RESPONSE_TOPIC, DYNSEC_TOPIC, DynsecClient, DynsecError } from '../../server/mqtt/dynsec';
import type { RunningServer } from '../../server/main';
import { findMosquitto, MosquittoInstance } from '../../scripts/lib/mosquitto';
import { MosquittoAccounts } from '../../server/mqtt/mosquittoAccounts';
import { DYNSEC_ADMIN_USER, readAdminSecret } from '../../server/mqtt/mosquittoFiles';
import { CommittedPayload, INGEST_READY_TOPIC, topics } from '../../shared/schemas/telemetry';
import { loadConfig } from '../../server/config';
import { factories, startTestServer } from './helpers/app';
import { call, expectStatus, signInRoles, type Session } from './helpers/roles';
import { connectController, provisionBox, publishTelemetry, reading, storedRows, waitFor } from './helpers/telemetry';

const MISSING = findMosquitto() === null;
if (MISSING) console.warn('tests/server/mosquitto.test.ts skipped: mosquitto is not installed (apt-get install mosquitto)');

const dataDir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-mosquitto-'));
// Saves every second, so the test of the save interval does not wait long.
const mosquitto = new MosquittoInstance({ dataDir, port: 0, maxPacketBytes: 8192, maxConnections: 1000, maxQueuedMessages: 10_000, autosaveS: 1, log: () => undefined });
let srv: RunningServer;
let admin: Session;
let url = '';

async function startRimehold(): Promise<void> {
  url = `mqtt://127.0.0.1:${mosquitto.port}`;
  srv = await startTestServer({ MQTT_BROKER: 'mosquitto', MQTT_PORT: String(mosquitto.port), MOSQUITTO_DIR: dataDir, MOSQUITTO_AUTOSAVE_S: '1' }, { telemetry: true, batchWindowMs: 20 });
  const customer = await factories(srv).customer();
  admin = (await signInRoles(srv, customer.id)).admin;
}

/** A box and a controller provisioned through the API; returns the one-time device secret. */
async function provisioned() {
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id);
  const box = await f.box(site.id, customer.id);
  const serial = `MQ-${Math.random().toString(36).slice(2, 10)}`;
  const res = await call(admin, 'post', '/api/v1/controllers', { boxId: box.id, serial });
  expectStatus(res, 201);
  return { box, serial, id: res.body.controller.id as number, secret: res.body.deviceSecret as string };
}

/** Resolves when the client's connection closes, or rejects after the timeout. */
function closed(c: MqttClient, timeoutMs = 3000): Promise<void> {
  return new Promise((resolve, reject) => {
    const t = setTimeout(() => reject(new Error('connection still open')), timeoutMs);
    c.once('close', () => {
      clearTimeout(t);
      resolve();
    });
  });
}

/** The error of a refused sign-in (mosquitto answers CONNACK 5, "Not authorized", to every refusal). */
async function refusal(serial: string, secret: string, clientId = `ctl-${serial}`): Promise<string> {
  try {
    const c = await connectController(url, serial, secret, { clientId });
    await c.endAsync(true);
    return 'signed in';
  } catch (err) {
    return (err as Error).message;
  }
}

beforeAll(async () => {
  if (MISSING) return;
  await mosquitto.start();
  url = `mqtt://127.0.0.1:${mosquitto.port}`;
  await startRimehold();
});
afterAll(async () => {
  if (MISSING) return;
  await srv?.stop();
  await mosquitto.stop(true);
});

describe('DynsecClient', () => {
  // A bare broker with no plugin plays the control topic: a second client answers as the plugin would.
  it('matches answers by correlation, surfaces errors, times out and drops malformed frames', async () => {
    const broker = await Aedes.createBroker();
    const server = net.createServer(broker.handle);
    await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()));
    const bareUrl = `mqtt://127.0.0.1:${(server.address() as net.AddressInfo).port}`;
    const plugin = await mqtt.connectAsync(bareUrl, { clientId: 'fake-plugin', protocolVersion: 4 });
    await plugin.subscribeAsync({ [DYNSEC_TOPIC]: { qos: 1 } });
    plugin.on('message', (_t, payload) => {
      const cmd = (JSON.parse(payload.toString()) as { commands: Array<{ command: string; correlationData: string }> }).commands[0];
      if (!cmd || cmd.command === 'neverAnswered') return;
      // Each answer follows a stray frame, and the two commands are in flight together: correlation sorts them out.
      const answer = cmd.command === 'getClient' ? { command: 'getClient', correlationData: cmd.correlationData, data: { client: { username: 'x' } } } : { command: cmd.command, correlationData: cmd.correlationData, error: 'Client not found' };
      void plugin.publishAsync(DYNSEC_RESPONSE_TOPIC, 'not json', { qos: 1 }).then(() => plugin.publishAsync(DYNSEC_RESPONSE_TOPIC, JSON.stringify({ responses: [answer] }), { qos: 1 }));
    });
    const d = new DynsecClient({ url: bareUrl, username: 'u', password: 'p', timeoutMs: 300 });
    await d.start();
    try {
      const [ok, failed] = await Promise.allSettled([d.command('getClient', { username: 'x' }), d.command('deleteClient', { username: 'y' })]);
      expect(ok).toEqual({ status: 'fulfilled', value: { client: { username: 'x' } } });
      expect(failed.status === 'rejected' && failed.reason instanceof DynsecError && failed.reason.reason).toBe('Client not found');
      const started = Date.now();
      await expect(d.command('neverAnswered')).rejects.toMatchObject({ reason: 'timeout' });
      expect(Date.now() - started).toBeGreaterThanOrEqual(290);
      expect(d.droppedFrames).toBeGreaterThanOrEqual(2);
    } finally {
      await d.stop();
      await plugin.endAsync();
      await new Promise<void>((r) => broker.close(() => r()));
      await new Promise<void>((r) => server.close(() => r()));
    }
    await expect(d.command('getClient')).rejects.toMatchObject({ reason: 'disconnected' });
  });
});

describe('MQTT_BROKER', () => {
  it('defaults to the embedded broker and refuses other values', () => {
    expect(loadConfig({}).MQTT_BROKER).toBe('embedded');
    expect(loadConfig({ MQTT_BROKER: 'mosquitto' }).MQTT_BROKER).toBe('mosquitto');
    expect(() => loadConfig({ MQTT_BROKER: 'rabbitmq' })).toThrow(/MQTT_BROKER/);
    expect(() => loadConfig({ MOSQUITTO_AUTOSAVE_S: '0' })).toThrow(/MOSQUITTO_AUTOSAVE_S/);
    // A controller holds an acknowledged reading for 10 min: a save interval may not be longer than that hold.
    expect(() => loadConfig({ MOSQUITTO_AUTOSAVE_S: '301' })).toThrow(/MOSQUITTO_AUTOSAVE_S/);
    expect(loadConfig({ MOSQUITTO_AUTOSAVE_S: '300' }).MOSQUITTO_AUTOSAVE_S).toBe(300);
  });

  it('refuses MQTT_URL together with MQTT_BROKER=mosquitto', () => {
    expect(() => loadConfig({ MQTT_BROKER: 'mosquitto', MQTT_URL: 'mqtt://127.0.0.1:1883' })).toThrow(/MQTT_URL/);
  });
});

describe.skipIf(MISSING)('MQTT_BROKER=mosquitto', () => {
  it('writes a loopback-only, no-anonymous configuration with the dynamic-security plugin and periodic persistence', () => {
    const conf = readFileSync(mosquitto.paths.config, 'utf8');
    expect(conf).toContain(`listener ${mosquitto.port} 127.0.0.1`);
    expect(conf).toMatch(/^allow_anonymous false$/m);
    expect(conf).toMatch(/^plugin \S*mosquitto_dynamic_security\.so$/m);
    expect(conf).toContain(`plugin_opt_config_file ${path.join(dataDir, 'dynamic-security.json')}`);
    expect(conf).toMatch(/^persistence true$/m);
    expect(conf).toMatch(/^autosave_interval 1$/m);
    expect(conf).toMatch(/^max_packet_size 8192$/m);
    expect(conf).toMatch(/^max_queued_messages 10000$/m);
    expect(conf).not.toMatch(/^listener \d+$/m);
  });

  it('reports the broker as mosquitto and up', async () => {
    const health = await request(srv.server).get('/api/v1/health').expect(200);
    expect(health.body).toMatchObject({ brokerMode: 'mosquitto', broker: 'up' });
    expect(srv.broker).toBeNull();
  });

  it('refuses a client without credentials', async () => {
    expect(await refusal('', '', 'anonymous-probe')).toMatch(/Not authorized|Bad username/i);
  });

  it('signs a provisioned controller in with its secret, refuses a wrong one, and stores what it publishes', async () => {
    const p = await provisioned();
    expect(await refusal(p.serial, `${p.secret}x`)).toMatch(/Not authorized/);
    const c = await connectController(url, p.serial, p.secret);
    const r = reading();
    await publishTelemetry(c, p.serial, r);
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length ? rs : null;
    });
    expect(rows.map((row) => Number(row.seq))).toEqual([r.seq]);
    await c.endAsync();
  });

  it('refuses a client id other than ctl-{serial}', async () => {
    const p = await provisioned();
    expect(await refusal(p.serial, p.secret, p.serial)).toMatch(/Not authorized/);
    expect(await refusal(p.serial, p.secret, `ctl-${p.serial}-2`)).toMatch(/Not authorized/);
  });

  it("does not pass on a controller's publish to another serial's topic", async () => {
    const a = await provisioned();
    const b = await provisioned();
    const c = await connectController(url, a.serial, a.secret);
    // mosquitto acknowledges a refused QoS 1 publish of MQTT 3.1.1 and drops it.
    await publishTelemetry(c, b.serial, reading());
    const own = reading();
    await publishTelemetry(c, a.serial, own);
    await waitFor(async () => (await storedRows(srv, a.box.id)).length > 0);
    await new Promise((r) => setTimeout(r, 300));
    expect(await storedRows(srv, b.box.id)).toEqual([]);
    await c.endAsync();
  });

  it('lets a controller subscribe to its own config/set only, and delivers settings there', async () => {
    const a = await provisioned();
    const b = await provisioned();
    const c = await connectController(url, a.serial, a.secret);
    await expect(c.subscribeAsync({ [topics.configSet(b.serial)]: { qos: 1 } })).rejects.toThrow();
    await expect(c.subscribeAsync({ 'rimehold/v1/ctl/+/config/set': { qos: 1 } })).rejects.toThrow();
    await expect(c.subscribeAsync({ [topics.telemetry(a.serial)]: { qos: 1 } })).rejects.toThrow();
    await expect(c.subscribeAsync({ '#': { qos: 1 } })).rejects.toThrow();
    const granted = await c.subscribeAsync({ [topics.configSet(a.serial)]: { qos: 1 } });
    expect(granted.map((g) => g.qos)).toEqual([1]);
    const got = new Promise<string>((resolve) => c.once('message', (_t, payload) => resolve(payload.toString())));
    await srv.ctx.publish?.(topics.configSet(a.serial), JSON.stringify({ id: 'probe-1', setpointC: 3 }));
    expect(JSON.parse(await got)).toEqual({ id: 'probe-1', setpointC: 3 });
    await c.endAsync();
  });

  it('lets a controller hear its own committed seqs and the ingest-ready call, and no other controller’s', async () => {
    const a = await provisioned();
    const b = await provisioned();
    const c = await connectController(url, a.serial, a.secret);
    await expect(c.subscribeAsync({ [topics.committed(b.serial)]: { qos: 0 } })).rejects.toThrow();
    await expect(c.subscribeAsync({ 'rimehold/v1/ctl/+/committed': { qos: 0 } })).rejects.toThrow();
    const granted = await c.subscribeAsync({ [topics.committed(a.serial)]: { qos: 0 }, [INGEST_READY_TOPIC]: { qos: 0 } });
    expect(granted.map((g) => g.qos)).toEqual([0, 0]);
    const got = new Promise<number[]>((resolve) => c.on('message', (t, payload) => t === topics.committed(a.serial) && resolve(CommittedPayload.parse(JSON.parse(payload.toString())).seqs)));
    const r = reading();
    await publishTelemetry(c, a.serial, r);
    expect(await got).toEqual([r.seq]);
    await c.endAsync();
  });

  it('adds the committed rules to a controller role made before they existed, at the next start', async () => {
    const p = await provisioned();
    const dynsec = new DynsecClient({ url, username: DYNSEC_ADMIN_USER, password: readAdminSecret(dataDir) });
    await dynsec.start();
    try {
      // Arrange: the role as an earlier Rimehold made it.
      for (const topic of [topics.committed(p.serial), INGEST_READY_TOPIC]) {
        await dynsec.command('removeRoleACL', { rolename: `rimehold-ctl-${p.serial}`, acltype: 'subscribeLiteral', topic });
      }
      const old = await connectController(url, p.serial, p.secret);
      await expect(old.subscribeAsync({ [topics.committed(p.serial)]: { qos: 0 } })).rejects.toThrow();
      await old.endAsync(true);
      // Act: the server's account manager starts again.
      const cfg = srv.ctx.config;
      const accounts = new MosquittoAccounts({ url, adminPassword: readAdminSecret(dataDir), ingest: { username: cfg.MQTT_INGEST_USER, password: cfg.MQTT_INGEST_PASSWORD, clientId: cfg.MQTT_INGEST_CLIENT_ID }, sim: null, models: srv.ctx.models, bus: srv.ctx.bus, logger: srv.ctx.logger });
      await accounts.start();
      await accounts.stop();
      // Assert
      const now = await connectController(url, p.serial, p.secret);
      const granted = await now.subscribeAsync({ [topics.committed(p.serial)]: { qos: 0 }, [INGEST_READY_TOPIC]: { qos: 0 } });
      expect(granted.map((g) => g.qos)).toEqual([0, 0]);
      await now.endAsync();
    } finally {
      await dynsec.stop();
    }
  });

  it("never publishes a last will set on another controller's status topic", async () => {
    const a = await provisioned();
    const b = await provisioned();
    // mosquitto accepts the CONNECT and checks the will against the ACL only when it fires.
    const liar = await connectController(url, a.serial, a.secret, { will: { topic: topics.status(b.serial), payload: Buffer.from('online'), qos: 1, retain: false } });
    const honest = await connectController(url, b.serial, b.secret, { will: { topic: topics.status(b.serial), payload: Buffer.from('online'), qos: 1, retain: false } });
    const row = () => srv.ctx.models.Controller.findOne({ where: { serial: b.serial } });
    // Both connections are lost abruptly, so both wills fire; only B's own one may arrive.
    liar.stream.destroy();
    await new Promise((r) => setTimeout(r, 500));
    expect((await row())?.online).toBe(false);
    honest.stream.destroy();
    await waitFor(async () => (await row())?.online === true);
    liar.end(true);
    honest.end(true);
  });

  it('makes a rotated secret fail at once and drops the live connection', async () => {
    const p = await provisioned();
    const c = await connectController(url, p.serial, p.secret);
    const drop = closed(c);
    const res = await call(admin, 'post', `/api/v1/controllers/${p.id}/rotate-secret`);
    expectStatus(res, 200);
    const fresh = res.body.deviceSecret as string;
    expect(fresh).not.toBe(p.secret);
    await drop;
    expect(await refusal(p.serial, p.secret)).toMatch(/Not authorized/);
    const again = await connectController(url, p.serial, fresh);
    await again.endAsync();
  });

  it('drops a disabled controller and refuses it until it is enabled again', async () => {
    const p = await provisioned();
    const c = await connectController(url, p.serial, p.secret);
    const drop = closed(c);
    expectStatus(await call(admin, 'post', `/api/v1/controllers/${p.id}/disable`), 200);
    await drop;
    expect(await refusal(p.serial, p.secret)).toMatch(/Not authorized/);
    expectStatus(await call(admin, 'post', `/api/v1/controllers/${p.id}/enable`), 200);
    const again = await connectController(url, p.serial, p.secret);
    await again.endAsync();
  });

  it('removes the account when the box is deleted with its controller', async () => {
    const p = await provisioned();
    const c = await connectController(url, p.serial, p.secret);
    const drop = closed(c);
    expectStatus(await call(admin, 'delete', `/api/v1/boxes/${p.box.id}`), 204);
    await drop;
    expect(await refusal(p.serial, p.secret)).toMatch(/Not authorized/);
  });

  it('gives a controller provisioned before mosquitto was chosen an account when its secret is rotated', async () => {
    // Only the secret's hash is stored, so such a controller has no account until rotated.
    const p = await provisionBox(srv);
    expect(await refusal(p.serial, p.secret)).toMatch(/Not authorized/);
    const res = await call(admin, 'post', `/api/v1/controllers/${p.controller.id}/rotate-secret`);
    expectStatus(res, 200);
    const c = await connectController(url, p.serial, res.body.deviceSecret as string);
    await c.endAsync();
  });

  it("gives the demo fleet's controllers and the simulator's service account their accounts at start", async () => {
    const p = await provisionBox(srv);
    const fleetFile = path.join(dataDir, 'fleet-probe.json');
    writeFileSync(fleetFile, JSON.stringify({ controllers: [{ serial: p.serial, secret: p.secret, boxName: 'probe' }, { serial: 'NOT-PROVISIONED', secret: 'x' }] }));
    const cfg = srv.ctx.config;
    const sim = { username: 'sim-probe', password: 'sim-probe-secret-1234', clientId: 'sim-probe-client' };
    const accounts = new MosquittoAccounts({
      url,
      adminPassword: readAdminSecret(dataDir),
      ingest: { username: cfg.MQTT_INGEST_USER, password: cfg.MQTT_INGEST_PASSWORD, clientId: cfg.MQTT_INGEST_CLIENT_ID },
      sim,
      demoFleetFile: fleetFile,
      models: srv.ctx.models,
      bus: srv.ctx.bus,
      logger: srv.ctx.logger,
    });
    await accounts.start();
    try {
      const unprovisioned = await provisionBox(srv);
      const missing = await accounts.controllersWithoutAccount();
      expect(missing).toContain(unprovisioned.serial);
      expect(missing).not.toContain(p.serial);
      const c = await connectController(url, p.serial, p.secret);
      await c.endAsync();
      expect(await refusal('NOT-PROVISIONED', 'x')).toMatch(/Not authorized/);
      const s = await connectController(url, sim.username, sim.password, { clientId: sim.clientId });
      const granted = await s.subscribeAsync({ 'rimehold/v1/sim/fault': { qos: 1 } });
      expect(granted.map((g) => g.qos)).toEqual([1]);
      await expect(s.subscribeAsync({ 'rimehold/v1/ctl/+/telemetry': { qos: 1 } })).rejects.toThrow();
      await s.endAsync();
      expect(await refusal(sim.username, sim.password, 'another-client')).toMatch(/Not authorized/);
    } finally {
      await accounts.stop();
    }
  });

  it('keeps accounts and the queued readings of the stopped ingest across a clean mosquitto restart', async () => {
    const p = await provisioned();
    await srv.stop();
    // The ingest is gone but its persistent session stays: mosquitto queues for it.
    const c = await connectController(url, p.serial, p.secret);
    const r = reading();
    await publishTelemetry(c, p.serial, r);
    await c.endAsync();
    await mosquitto.stop();
    await mosquitto.start();
    await startRimehold();
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length ? rs : null;
    });
    expect(rows.map((row) => Number(row.seq))).toEqual([r.seq]);
    const again = await connectController(url, p.serial, p.secret);
    await again.endAsync();
  });

  it('answers 503 and changes nothing when mosquitto cannot take an account change', async () => {
    const p = await provisioned();
    const before = await srv.ctx.models.Controller.findByPk(p.id);
    await mosquitto.stop();
    try {
      const f = factories(srv);
      const customer = await f.customer();
      const site = await f.site(customer.id);
      const box = await f.box(site.id, customer.id);
      expectStatus(await call(admin, 'post', '/api/v1/controllers', { boxId: box.id, serial: `MQ-down-${p.id}` }), 503);
      expect(await srv.ctx.models.Controller.count({ where: { boxId: box.id } })).toBe(0);
      expectStatus(await call(admin, 'post', `/api/v1/controllers/${p.id}/rotate-secret`), 503);
      expectStatus(await call(admin, 'post', `/api/v1/controllers/${p.id}/disable`), 503);
      const after = await srv.ctx.models.Controller.findByPk(p.id);
      expect(after?.secretHash).toBe(before?.secretHash);
      expect(after?.disabled).toBe(false);
    } finally {
      await mosquitto.start();
    }
    // The account manager reconnects by itself; the old secret still signs in.
    await waitFor(async () => (await refusal(p.serial, p.secret)) === 'signed in', 10_000, 200);
    const res = await waitFor(async () => {
      const r = await call(admin, 'post', `/api/v1/controllers/${p.id}/rotate-secret`);
      return r.status === 200 ? r : null;
    }, 10_000, 300);
    expect(await refusal(p.serial, res.body.deviceSecret as string)).toBe('signed in');
  });

  it('keeps a queued reading across a mosquitto crash once a save interval has passed', async () => {
    const p = await provisioned();
    await srv.stop();
    const c = await connectController(url, p.serial, p.secret);
    const r = reading();
    await publishTelemetry(c, p.serial, r);
    await c.endAsync();
    // MOSQUITTO_AUTOSAVE_S is 1 here: after 2.5 s the reading is in the saved state.
    await new Promise((res) => setTimeout(res, 2500));
    await mosquitto.crash();
    await mosquitto.start();
    await startRimehold();
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length ? rs : null;
    });
    expect(rows.map((row) => Number(row.seq))).toEqual([r.seq]);
  });
});

describe.skipIf(MISSING)('mosquitto queue bound', () => {
  it('acknowledges but drops what exceeds max_queued_messages for an offline persistent session', async () => {
    // Arrange: a second instance whose queue holds 20 messages, and a stand-in for the ingest.
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-mosquitto-q-'));
    const small = new MosquittoInstance({ dataDir: dir, port: 0, maxPacketBytes: 8192, maxConnections: 100, maxQueuedMessages: 20, autosaveS: 10, log: () => undefined });
    const port = await small.start();
    const qUrl = `mqtt://127.0.0.1:${port}`;
    const p = await provisionBox(srv);
    const ingest = { username: 'ingest-probe', password: 'ingest-probe-secret-1', clientId: 'ingest-probe' };
    const accounts = new MosquittoAccounts({ url: qUrl, adminPassword: readAdminSecret(dir), ingest, sim: null, models: srv.ctx.models, bus: srv.ctx.bus, logger: srv.ctx.logger });
    await accounts.start();
    try {
      await accounts.provision(p.serial, p.secret);
      const sub = await connectController(qUrl, ingest.username, ingest.password, { clientId: ingest.clientId, clean: false });
      await sub.subscribeAsync({ 'rimehold/v1/ctl/+/telemetry': { qos: 1 } });
      await sub.endAsync();
      // Act: 30 readings while the stand-in is away; every publish is acknowledged.
      const c = await connectController(qUrl, p.serial, p.secret);
      for (let i = 0; i < 30; i++) await publishTelemetry(c, p.serial, reading());
      await c.endAsync();
      const received: number[] = [];
      const back = await new Promise<MqttClient>((resolve, reject) => {
        const m = mqtt.connect(qUrl, { clientId: ingest.clientId, username: ingest.username, password: ingest.password, clean: false, protocolVersion: 4, reconnectPeriod: 0 });
        m.on('message', (_t, payload) => received.push(JSON.parse(payload.toString()).seq as number));
        m.once('connect', () => resolve(m));
        m.once('error', reject);
      });
      await new Promise((r) => setTimeout(r, 500));
      await back.endAsync();
      // Assert: only the queue's worth arrives; the rest was lost after its PUBACK.
      expect(received.length).toBe(20);
    } finally {
      await accounts.stop();
      await small.stop();
    }
  });
});
