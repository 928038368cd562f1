import net from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import type { RunningServer } from '../../server/main';
import { EVAPORATOR_SUPERHEAT_FLOOR_K, deltaFToDeltaK } from '../../shared/field';
import { ConfigSetPayload, topics } from '../../shared/schemas/telemetry';
import type { LiveEvent } from '../../shared/schemas/live';
import { factories, signIn } from './helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer, waitFor } from './helpers/telemetry';

let srv: RunningServer;
let url: string;
let f: ReturnType<typeof factories>;

beforeAll(async () => {
  srv = await startTelemetryServer();
  url = srv.mqttUrl ?? '';
  f = factories(srv);
});
afterAll(async () => srv.stop());

function cookieOf(agent: { jar: { getCookies(o: { domain: string; path: string; secure: boolean; script: boolean }): Array<{ name: string; value: string }> } }): string {
  const c = agent.jar.getCookies({ domain: '127.0.0.1', path: '/', secure: false, script: false }).find((x) => x.name === 'sid');
  return c ? `sid=${c.value}` : '';
}

function openSocket(cookie: string | null, origin = srv.url): Promise<{ ws: WebSocket; events: LiveEvent[] }> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(`${srv.url.replace('http', 'ws')}/ws`, { headers: { ...(cookie ? { Cookie: cookie } : {}), Origin: origin } });
    const events: LiveEvent[] = [];
    ws.on('message', (d) => events.push(JSON.parse(d.toString()) as LiveEvent));
    ws.once('open', () => resolve({ ws, events }));
    ws.once('unexpected-response', (_req, res) => reject(new Error(`HTTP ${res.statusCode}`)));
    ws.once('error', reject);
  });
}

describe('PUT /api/v1/boxes/:id/settings', () => {
  it('publishes config/set, tracks it as pending, and applies what the controller acknowledges', async () => {
    const p = await provisionBox(srv, { superheatTargetK: 3.3 });
    const tech = await f.user('technician');
    const { agent, csrf } = await signIn(srv, tech.email, tech.password);
    const ctl = await connectController(url, p.serial, p.secret);
    await ctl.subscribeAsync(topics.configSet(p.serial), { qos: 1 });
    const received = new Promise<ConfigSetPayload>((resolve) => ctl.on('message', (_t, m) => resolve(ConfigSetPayload.parse(JSON.parse(m.toString())))));
    const res = await agent.put(`/api/v1/boxes/${p.box.id}/settings`).set('x-csrf-token', csrf).send({ superheatTargetK: 4, setpointC: 2.5 });
    expect(res.status).toBe(202);
    expect(res.body.state).toBe('pending');
    const cfg = await received;
    expect(cfg).toMatchObject({ id: res.body.id, superheatTargetK: 4, setpointC: 2.5 });
    // The controller applies a rounded setpoint and says so.
    await ctl.publishAsync(topics.configAck(p.serial), JSON.stringify({ id: cfg.id, ok: true, applied: { superheatTargetK: 4, setpointC: 2.5 } }), { qos: 1 });
    await waitFor(async () => (await srv.ctx.models.SettingsChange.findByPk(cfg.id))?.state === 'applied');
    await p.box.reload();
    expect(p.box.superheatTargetK).toBe(4);
    expect(p.box.setpointC).toBe(2.5);
    const audit = await srv.ctx.models.AuditEntry.findAll({ where: { entityType: 'box', entityId: String(p.box.id) } });
    expect(audit.map((a) => a.action)).toEqual(expect.arrayContaining(['box.settings.request', 'box.settings.applied']));
    await ctl.endAsync();
  });

  it('refuses a superheat target below the evaporator superheat floor (common practice) unless overridden with a reason', async () => {
    // Common practice: technicians keep superheat at or above about 5 °F (2.78 K) so liquid does not reach the compressor.
    expect(EVAPORATOR_SUPERHEAT_FLOOR_K).toBeCloseTo(deltaFToDeltaK(5), 12);
    const p = await provisionBox(srv);
    const admin = await f.user('admin');
    const { agent, csrf } = await signIn(srv, admin.email, admin.password);
    const low = await agent.put(`/api/v1/boxes/${p.box.id}/settings`).set('x-csrf-token', csrf).send({ superheatTargetK: 2 });
    expect(low.status).toBe(422);
    expect(low.body.type).toMatch(/superheat-below-minimum$/);
    expect(await srv.ctx.models.SettingsChange.count({ where: { boxId: p.box.id } })).toBe(0);
    const ok = await agent.put(`/api/v1/boxes/${p.box.id}/settings`).set('x-csrf-token', csrf).send({ superheatTargetK: 2, override: { reason: 'Coil maker specifies 2 K for this low-temperature unit' } });
    expect(ok.status).toBe(202);
    const row = await srv.ctx.models.SettingsChange.findByPk(ok.body.id);
    expect(row?.overrideReason).toMatch(/Coil maker/);
  });

  it('validates ranges and refuses managers', async () => {
    const p = await provisionBox(srv);
    const admin = await f.user('admin');
    const { agent, csrf } = await signIn(srv, admin.email, admin.password);
    const bad = await agent.put(`/api/v1/boxes/${p.box.id}/settings`).set('x-csrf-token', csrf).send({ setpointC: 99 });
    expect(bad.status).toBe(400);
    expect(bad.body.errors).toHaveProperty('setpointC');
    const manager = await f.user('manager', p.customer.id);
    const m = await signIn(srv, manager.email, manager.password);
    const res = await m.agent.put(`/api/v1/boxes/${p.box.id}/settings`).set('x-csrf-token', m.csrf).send({ setpointC: 3 });
    expect(res.status).toBe(403);
  });

  it('marks a change timed-out when no acknowledgement comes', async () => {
    const p = await provisionBox(srv);
    const admin = await f.user('admin');
    const { agent, csrf } = await signIn(srv, admin.email, admin.password);
    const res = await agent.put(`/api/v1/boxes/${p.box.id}/settings`).set('x-csrf-token', csrf).send({ setpointC: 3 });
    const settings = await import('../../server/telemetry/settings');
    const svc = new settings.SettingsService(srv.ctx);
    await svc.sweep(Date.now() + settings.SETTINGS_ACK_TIMEOUT_MS + 1000);
    expect((await srv.ctx.models.SettingsChange.findByPk(res.body.id))?.state).toBe('timed-out');
  });
});

describe('GET /api/v1/boxes/:id/readings', () => {
  it('answers raw points for a short span and 15-minute buckets for a week', async () => {
    const p = await provisionBox(srv);
    const ctl = await connectController(url, p.serial, p.secret);
    const t0 = Date.now() - 30 * 60_000;
    for (let i = 0; i < 6; i++) await publishTelemetry(ctl, p.serial, reading({ ts: new Date(t0 + i * 10_000).toISOString(), boxAirC: 2 + i / 10 }));
    const tech = await f.user('technician');
    const { agent } = await signIn(srv, tech.email, tech.password);
    await waitFor(async () => (await agent.get(`/api/v1/boxes/${p.box.id}/readings`).query({ from: new Date(t0 - 1000).toISOString(), to: new Date().toISOString() })).body.points?.length === 6);
    const week = await agent.get(`/api/v1/boxes/${p.box.id}/readings`).query({ from: new Date(Date.now() - 7 * 86_400_000).toISOString(), to: new Date().toISOString() });
    expect(week.body.resolution).toBe('15m');
    expect(week.body.points.length).toBeGreaterThanOrEqual(1);
    expect(week.body.points.reduce((a: number, x: { samples: number }) => a + x.samples, 0)).toBe(6);
    const bad = await agent.get(`/api/v1/boxes/${p.box.id}/readings`).query({ from: 'yesterday', to: new Date().toISOString() });
    expect(bad.status).toBe(400);
    await ctl.endAsync();
  });

  it('answers 404 to a manager of another customer', async () => {
    const p = await provisionBox(srv);
    const other = await f.customer();
    const m = await f.user('manager', other.id);
    const { agent } = await signIn(srv, m.email, m.password);
    const res = await agent.get(`/api/v1/boxes/${p.box.id}/readings`).query({ from: new Date(Date.now() - 3_600_000).toISOString(), to: new Date().toISOString() });
    expect(res.status).toBe(404);
    const fleet = await agent.get('/api/v1/fleet/status');
    expect(fleet.body.every((b: { customerId: number }) => b.customerId === other.id)).toBe(true);
  });
});

describe('GET /api/v1/fleet/status tenant scope', () => {
  it('shows a technician boxes of every customer and a manager without a customer none', async () => {
    const one = await provisionBox(srv);
    const two = await provisionBox(srv);
    const tech = await f.user('technician');
    const t = await signIn(srv, tech.email, tech.password);
    const all = await t.agent.get('/api/v1/fleet/status').expect(200);
    const seen = new Set(all.body.map((b: { customerId: number }) => b.customerId));
    expect(seen.has(one.customer.id) && seen.has(two.customer.id)).toBe(true);
    const homeless = await f.user('manager', null);
    const h = await signIn(srv, homeless.email, homeless.password);
    expect((await h.agent.get('/api/v1/fleet/status').expect(200)).body).toEqual([]);
  });
});

describe('WebSocket /ws', () => {
  it('refuses an upgrade without a session', async () => {
    await expect(openSocket(null)).rejects.toThrow(/401/);
  });

  it('refuses a foreign Origin', async () => {
    const admin = await f.user('admin');
    const { agent } = await signIn(srv, admin.email, admin.password);
    await expect(openSocket(cookieOf(agent as never), 'https://evil.example.net')).rejects.toThrow(/403/);
  });

  it('pushes readings only to users allowed to see the box', async () => {
    const p = await provisionBox(srv);
    const own = await f.user('manager', p.customer.id);
    const otherCustomer = await f.customer();
    const foreign = await f.user('manager', otherCustomer.id);
    const a = await signIn(srv, own.email, own.password);
    const b = await signIn(srv, foreign.email, foreign.password);
    const sa = await openSocket(cookieOf(a.agent as never));
    const sb = await openSocket(cookieOf(b.agent as never));
    const ctl = await connectController(url, p.serial, p.secret);
    const r = reading({ boxAirC: 3.3 });
    await publishTelemetry(ctl, p.serial, r);
    await waitFor(() => sa.events.some((e) => e.type === 'reading' && e.boxId === p.box.id));
    const got = sa.events.find((e) => e.type === 'reading' && e.boxId === p.box.id);
    expect(got && got.type === 'reading' ? got.reading.boxAirC : null).toBe(3.3);
    await new Promise((res) => setTimeout(res, 200));
    expect(sb.events.some((e) => e.type === 'reading' && e.boxId === p.box.id)).toBe(false);
    expect(sa.events[0]?.type).toBe('hello');
    sa.ws.close();
    sb.ws.close();
    await ctl.endAsync();
  });

  it('closes the socket when the user signs out', async () => {
    const u = await f.user('technician');
    const { agent, csrf } = await signIn(srv, u.email, u.password);
    const s = await openSocket(cookieOf(agent as never));
    const closed = new Promise<number>((resolve) => s.ws.once('close', (code) => resolve(code)));
    await agent.post('/api/v1/auth/logout').set('x-csrf-token', csrf).expect(204);
    expect(await closed).toBe(4001);
  });

  it('closes the socket with 4003 when an admin changes the user\'s role, and the user can open a new socket', async () => {
    const u = await f.user('technician');
    const { agent } = await signIn(srv, u.email, u.password);
    const s = await openSocket(cookieOf(agent as never));
    const closed = new Promise<number>((resolve) => s.ws.once('close', (code) => resolve(code)));
    const admin = await f.user('admin');
    const a = await signIn(srv, admin.email, admin.password);
    await a.agent.patch(`/api/v1/users/${u.user.id}`).set('x-csrf-token', a.csrf).send({ role: 'admin' }).expect(200);
    expect(await closed).toBe(4003);
    const again = await openSocket(cookieOf(agent as never));
    await waitFor(() => again.events.some((e) => e.type === 'hello'));
    again.ws.close();
  });

  it('answers and closes an upgrade to any path other than /ws', async () => {
    const { port } = new URL(srv.url);
    const answer = await new Promise<string>((resolve, reject) => {
      const sock = net.connect(Number(port), '127.0.0.1', () => {
        sock.write(`GET /not-the-hub HTTP/1.1\r\nHost: 127.0.0.1:${port}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\nSec-WebSocket-Key: ${Buffer.from('0123456789abcdef').toString('base64')}\r\nSec-WebSocket-Version: 13\r\n\r\n`);
      });
      let text = '';
      sock.on('data', (d) => (text += d.toString('latin1')));
      sock.once('close', () => resolve(text));
      sock.once('error', reject);
      // Before the fix the socket was left open and silent: fail instead of hanging.
      setTimeout(() => {
        sock.destroy();
        reject(new Error(`upgrade left open; received: ${JSON.stringify(text)}`));
      }, 3000);
    });
    expect(answer).toMatch(/^HTTP\/1\.1 404 /);
  });
});
