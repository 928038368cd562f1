/**
 * Web Push: the fake push service's decryption against RFC 8291's worked example, a round trip
 * through the real web-push library, the subscriptions API, and an alarm pushed to the on-call
 * technician's (virtual) phone whose link acknowledges it once.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import webpush from 'web-push';
import type { RunningServer } from '../../server/main';
import { FakePushService } from '../../server/push/fakePushService';
import { checkVapidHeader, decryptPushBody, deviceKeysFrom, fromB64u, DecryptError } from '../../server/push/ece';
import { loopbackPlainAgent } from '../../server/push/service';
import { loadOrCreateVapidKeys, subscriptionsOf } from '../../server/push/store';
import { loadConfig } from '../../server/config';
import { AlarmPushPayload } from '../../shared/schemas/push';
import { startTelemetryServer, waitFor } from './helpers/telemetry';
import { call, expectProblem, expectStatus, signInRoles, type Sessions } from './helpers/roles';
import { factories, startTestServer } from './helpers/app';
import { DEMO_USERS } from '../../server/seed/demoData';
import { DEMO_PHONE_LABEL, registerDemoPushDevice } from '../../server/push/demo';
import { boxWithController, holdAbove, onCallAllWeek, waitForAlarm } from './helpers/alarms';

// RFC 8291 (Message Encryption for Web Push), Section 5 and Appendix A: the worked example's inputs and the encrypted message.
const RFC8291 = {
  plaintext: 'When I grow up, I want to be a watermelon',
  uaPrivate: 'q1dXpw3UpT5VOmu_cf_v6ih07Aems3njxI-JWgLcM94',
  uaPublic: 'BCVxsr7N_eNgVRqvHtD0zTZsEc6-VV-JvLexhqUzORcxaOzi6-AYWXvTBHm4bjyPjs7Vd8pZGH6SRpkNtoIAiw4',
  authSecret: 'BTBZMqHH6r4Tts7J_aSIgg',
  body: 'DGv6ra1nlYgDCS1FRnbzlwAAEABBBP4z9KsN6nGRTbVYI_c7VJSPQTBtkgcy27mlmlMoZIIgDll6e3vCYLocInmYWAmS6TlzAC8wEqKK6PBru3jl7A_yl95bQpu6cVPTpK4Mqgkf1CXztLVBSt2Ks3oZwbuwXPXLWyouBWLVWGNWQexSgSxsj_Qulcy4a-fN',
};

describe('aes128gcm decryption (RFC 8291 / RFC 8188)', () => {
  it('decrypts the worked example of RFC 8291 Appendix A to its plaintext', () => {
    const keys = deviceKeysFrom(fromB64u(RFC8291.uaPrivate), fromB64u(RFC8291.authSecret));
    expect(keys.publicKey.toString('base64url')).toBe(RFC8291.uaPublic);
    expect(decryptPushBody(fromB64u(RFC8291.body), keys).toString('utf8')).toBe(RFC8291.plaintext);
  });

  it('refuses the example with one ciphertext byte changed, and with the wrong auth secret', () => {
    const keys = deviceKeysFrom(fromB64u(RFC8291.uaPrivate), fromB64u(RFC8291.authSecret));
    const tampered = fromB64u(RFC8291.body);
    tampered[100] = (tampered[100] ?? 0) ^ 1;
    expect(() => decryptPushBody(tampered, keys)).toThrow(DecryptError);
    const wrongAuth = deviceKeysFrom(fromB64u(RFC8291.uaPrivate), Buffer.alloc(16, 7));
    expect(() => decryptPushBody(fromB64u(RFC8291.body), wrongAuth)).toThrow(/authentication/);
  });
});

describe('the fake push service with the web-push library', () => {
  let fake: FakePushService;
  const vapid = webpush.generateVAPIDKeys();
  const vapidDetails = { subject: 'mailto:test@test.example.com', publicKey: vapid.publicKey, privateKey: vapid.privateKey };
  const agent = loopbackPlainAgent();
  beforeAll(async () => {
    fake = new FakePushService();
    await fake.listen(0);
  });
  afterAll(async () => {
    agent.destroy();
    await fake.close();
  });

  it('receives a message sent with sendNotification, checks its VAPID header and decrypts it', async () => {
    const device = fake.createDevice('round trip');
    const res = await webpush.sendNotification({ endpoint: device.endpoint, keys: device.keys }, JSON.stringify({ hello: 'freezer 3' }), { vapidDetails, TTL: 60, urgency: 'high', topic: 'alarm-1', agent });
    expect(res.statusCode).toBe(201);
    const [m] = fake.messagesFor(device.id);
    expect(m?.error).toBeNull();
    expect(JSON.parse(m?.text ?? 'null')).toEqual({ hello: 'freezer 3' });
    expect([m?.ttlS, m?.urgency, m?.topic]).toEqual([60, 'high', 'alarm-1']);
  });

  it('answers 401 without VAPID, and 410 once the device is forgotten', async () => {
    const device = fake.createDevice('no vapid');
    await expect(webpush.sendNotification({ endpoint: device.endpoint, keys: device.keys }, 'x', { TTL: 60, agent })).rejects.toMatchObject({ statusCode: 401 });
    fake.forgetDevice(device.id);
    await expect(webpush.sendNotification({ endpoint: device.endpoint, keys: device.keys }, 'x', { vapidDetails, TTL: 60, agent })).rejects.toMatchObject({ statusCode: 410 });
    expect(fake.messagesFor(device.id)).toEqual([]);
  });

  it('refuses a VAPID token for another audience and one signed by another key', () => {
    const headers = webpush.getVapidHeaders(fake.origin, vapidDetails.subject, vapid.publicKey, vapid.privateKey, 'aes128gcm');
    expect(checkVapidHeader(headers.Authorization, fake.origin)).toMatchObject({ aud: fake.origin, publicKey: vapid.publicKey });
    expect(checkVapidHeader(headers.Authorization, 'http://127.0.0.1:1')).toMatchObject({ error: expect.stringMatching(/aud/) });
    const other = webpush.generateVAPIDKeys();
    const forged = headers.Authorization.replace(/k=[^,\s]+/, `k=${other.publicKey}`);
    expect(checkVapidHeader(forged, fake.origin)).toMatchObject({ error: expect.stringMatching(/signature/) });
  });
});

describe('/api/v1/push', () => {
  let srv: RunningServer;
  let s: Sessions;
  let rotationId: number;
  beforeAll(async () => {
    srv = await startTelemetryServer();
    s = await signInRoles(srv, (await factories(srv).customer()).id);
    rotationId = await onCallAllWeek(s.admin, s.technician.userId ?? 0);
  });
  afterAll(async () => {
    await srv.ctx.models.OncallRotation.destroy({ where: { id: rotationId } });
    await srv.stop();
  });

  const fakeOf = () => {
    const fake = srv.ctx.push?.fake;
    if (!fake) throw new Error('the test server runs with the fake push service (PUSH_FAKE unset outside production)');
    return fake;
  };
  const validKeys = () => fakeOf().createDevice('keys only').keys;

  it('serves the VAPID public key to signed-in users only, and keeps the same key pair', async () => {
    const res = await call(s.manager, 'get', '/api/v1/push/key');
    expectStatus(res, 200);
    // A P-256 public point, uncompressed: 65 bytes (RFC 8291 §3.2).
    expect(fromB64u(res.body.publicKey).length).toBe(65);
    expect((await loadOrCreateVapidKeys(srv.ctx.sequelize)).publicKey).toBe(res.body.publicKey);
    expectProblem(await call(s.anonymous, 'get', '/api/v1/push/key'), 401, 'unauthenticated');
  });

  it('refuses a plain-http endpoint with a 422 problem, and malformed keys with a 400 problem, storing nothing', async () => {
    const http = await call(s.technician, 'post', '/api/v1/push/subscriptions', { endpoint: 'http://push.example.com/abc', keys: validKeys(), label: 'Phone' });
    expectProblem(http, 422, 'push-endpoint-refused');
    const lan = await call(s.technician, 'post', '/api/v1/push/subscriptions', { endpoint: 'http://127.0.0.1:9/push/00000000-0000-0000-0000-000000000000', keys: validKeys(), label: 'Phone' });
    expectProblem(lan, 422, 'push-endpoint-refused');
    const keys = await call(s.technician, 'post', '/api/v1/push/subscriptions', { endpoint: 'https://push.example.com/abc', keys: { p256dh: 'AAAA', auth: 'not base64url!' }, label: 'Phone' });
    expectProblem(keys, 400, 'validation');
    expect(Object.keys(keys.body.errors)).toEqual(expect.arrayContaining(['keys.p256dh', 'keys.auth']));
    expect(await subscriptionsOf(srv.ctx.sequelize, [s.technician.userId ?? 0])).toEqual([]);
  });

  it('stores a subscription, lists only the caller’s own, and deletes only the caller’s own (404 for another user’s)', async () => {
    const body = { endpoint: `https://push.example.com/sub/${Date.now()}`, keys: validKeys(), label: 'Tech phone', expirationTime: null };
    const created = await call(s.technician, 'post', '/api/v1/push/subscriptions', body);
    expectStatus(created, 201);
    expect(created.body).toMatchObject({ label: 'Tech phone', service: 'push.example.com', lastSentAt: null });
    expect(created.body.keys).toBeUndefined();
    const mine = await call(s.technician, 'get', '/api/v1/push/subscriptions');
    expect(mine.body.map((x: { id: number }) => x.id)).toContain(created.body.id);
    const theirs = await call(s.manager, 'get', '/api/v1/push/subscriptions');
    expect(theirs.body.map((x: { id: number }) => x.id)).not.toContain(created.body.id);
    expectProblem(await call(s.manager, 'delete', `/api/v1/push/subscriptions/${created.body.id}`), 404, 'not-found');
    expect((await subscriptionsOf(srv.ctx.sequelize, [s.technician.userId ?? 0])).map((x) => x.id)).toContain(created.body.id);
    expectStatus(await call(s.technician, 'delete', `/api/v1/push/subscriptions/${created.body.id}`), 204);
    expect((await subscriptionsOf(srv.ctx.sequelize, [s.technician.userId ?? 0])).map((x) => x.id)).not.toContain(created.body.id);
    expect(await srv.ctx.models.AuditEntry.count({ where: { entityType: 'push_subscription', entityId: String(created.body.id) } })).toBe(2);
  });

  it('lets only admins read the push inbox and give a user a virtual phone', async () => {
    expectProblem(await call(s.technician, 'get', '/api/v1/dev/push-inbox'), 403, 'forbidden');
    expectProblem(await call(s.technician, 'post', '/api/v1/dev/push-devices', { userId: s.technician.userId }), 403, 'forbidden');
    expectProblem(await call(s.admin, 'post', '/api/v1/dev/push-devices', { userId: 999_999 }), 422, 'unknown-user');
    expectStatus(await call(s.admin, 'get', '/api/v1/dev/push-inbox'), 200);
  });

  it('pushes a raised alarm to the on-call technician’s phone; its link acknowledges once, and the log says push sent', async () => {
    const device = await call(s.admin, 'post', '/api/v1/dev/push-devices', { userId: s.technician.userId, label: 'Night phone' });
    expectStatus(device, 201);
    const p = await boxWithController(srv);
    // 8 °C for 12 min against the box's 5 °C high limit (41 °F, FDA Food Code 3-501.16(A)(2)) and its 10-min test delay.
    await holdAbove(p, 8, 12);
    const alarm = await waitForAlarm(srv, p.box.id, 'box-air-high');
    const fake = fakeOf();
    const msg = await waitFor(() => fake.messages.find((m) => m.deviceLabel === 'Night phone' && m.text?.includes(`"alarmId":${alarm.id}`)), 15_000);
    expect(msg.error).toBeNull();
    const payload = AlarmPushPayload.parse(JSON.parse(msg.text ?? ''));
    expect(payload).toMatchObject({ alarmId: alarm.id, priority: alarm.priority, tag: `alarm-${alarm.id}` });
    expect(payload.body).toContain(alarm.message);
    const token = new URL(payload.ackUrl).searchParams.get('ack');
    expect(new URL(payload.ackUrl).pathname).toBe(`/alarms/${alarm.id}`);
    const ack = await call(s.technician, 'post', '/api/v1/alarms/ack-link', { token });
    expectStatus(ack, 200);
    expect(ack.body.state).toBe('acknowledged');
    expectProblem(await call(s.technician, 'post', '/api/v1/alarms/ack-link', { token }), 410);
    const log = await srv.ctx.models.AlarmNotification.findAll({ where: { alarmId: alarm.id, channel: 'push', userId: s.technician.userId } });
    expect(log.map((n) => [n.status, n.recipient])).toEqual([['sent', `Night phone (${new URL(fake.origin).host})`]]);
    const inbox = await call(s.admin, 'get', '/api/v1/dev/push-inbox');
    expect(inbox.body.map((m: { id: number }) => m.id)).toContain(msg.id);
    await p.client.endAsync();
  });

  it('removes a subscription the push service answers 410 for, logs the push failed, and still mails', async () => {
    const fake = fakeOf();
    const subsBefore = await subscriptionsOf(srv.ctx.sequelize, [s.technician.userId ?? 0]);
    const night = subsBefore.find((x) => x.label === 'Night phone');
    if (!night) throw new Error('the previous test subscribed the night phone');
    fake.forgetDevice(night.endpoint.split('/').pop() ?? '');
    const p = await boxWithController(srv);
    // 8 °C for 12 min against the box's 5 °C high limit (41 °F, FDA Food Code 3-501.16(A)(2)) and its 10-min test delay.
    await holdAbove(p, 8, 12);
    const alarm = await waitForAlarm(srv, p.box.id, 'box-air-high');
    const failed = await waitFor(() => srv.ctx.models.AlarmNotification.findOne({ where: { alarmId: alarm.id, channel: 'push', userId: s.technician.userId } }), 15_000);
    expect(failed.status).toBe('failed');
    expect(failed.error).toMatch(/HTTP 410/);
    expect((await subscriptionsOf(srv.ctx.sequelize, [s.technician.userId ?? 0])).map((x) => x.id)).not.toContain(night.id);
    const mail = await srv.ctx.models.AlarmNotification.findOne({ where: { alarmId: alarm.id, channel: 'email', userId: s.technician.userId } });
    expect(mail?.status).toBe('sent');
    await p.client.endAsync();
  });
});

describe('the demo technician’s virtual phone', () => {
  let srv: RunningServer;
  beforeAll(async () => {
    srv = await startTestServer();
  });
  afterAll(async () => {
    await srv.stop();
  });

  it('is subscribed on the fake push service when the demo technician exists, and not otherwise', async () => {
    const email = DEMO_USERS.find((u) => u.role === 'technician')?.email ?? '';
    const existing = await srv.ctx.models.User.findOne({ where: { email } });
    if (!existing) expect(await registerDemoPushDevice(srv.ctx)).toBeNull();
    const tech = existing ?? (await srv.ctx.models.User.create({ email, name: 'Demo tech (test)', role: 'technician', customerId: null, passwordHash: 'x', inviteTokenHash: null, inviteExpiresAt: null, invitedAt: null, lastLoginAt: null, lockedUntil: null }));
    try {
      const id = await registerDemoPushDevice(srv.ctx);
      const subs = await subscriptionsOf(srv.ctx.sequelize, [tech.id]);
      expect(subs.filter((x) => x.id === id).map((x) => [x.label, srv.ctx.push?.fake?.owns(x.endpoint)])).toEqual([[DEMO_PHONE_LABEL, true]]);
    } finally {
      if (!existing) await tech.destroy();
    }
  });
});

describe('PUSH_FAKE in the configuration', () => {
  it('is on by default outside production, off by default in production, and refused there when set', () => {
    expect(loadConfig({ NODE_ENV: 'development' }).PUSH_FAKE).toBe(true);
    expect(loadConfig({ NODE_ENV: 'test', PUSH_FAKE: '0' }).PUSH_FAKE).toBe(false);
    const strong = 'k3J9q-Xa81_vLr0pQw7ZtYbNm2Hc';
    const prod = { NODE_ENV: 'production', SESSION_SECRET: strong, DB_PASSWORD: `${strong}1`, MQTT_INGEST_PASSWORD: `${strong}2`, MQTT_SIM_PASSWORD: `${strong}3` };
    expect(loadConfig(prod).PUSH_FAKE).toBe(false);
    expect(() => loadConfig({ ...prod, PUSH_FAKE: '1' })).toThrow(/PUSH_FAKE/);
  });
});
