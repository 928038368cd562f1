import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { factories, signIn } from './helpers/app';
import { connectController, startTelemetryServer, waitFor } from './helpers/telemetry';
import { call, expectProblem, expectStatus, signInRoles, type Session, type Sessions } from './helpers/roles';
import { ackTokenInMail, boxWithController, holdAbove, onCallAllWeek, waitForAlarm } from './helpers/alarms';

let srv: RunningServer;
let s: Sessions;
let box: Awaited<ReturnType<typeof boxWithController>>;
let techEmail: string;
let otherManager: Session;
let rotationId: number;
let alarmId: number;
let managerEmail: string;

beforeAll(async () => {
  srv = await startTelemetryServer();
  box = await boxWithController(srv);
  s = await signInRoles(srv, box.customer.id);
  const tech = await srv.ctx.models.User.findByPk(s.technician.userId ?? 0);
  techEmail = tech?.email ?? '';
  const mgr = await srv.ctx.models.User.findByPk(s.manager.userId ?? 0);
  managerEmail = mgr?.email ?? '';
  rotationId = await onCallAllWeek(s.admin, s.technician.userId ?? 0);
  const f = factories(srv);
  const other = await f.customer();
  const om = await f.user('manager', other.id);
  otherManager = { ...(await signIn(srv, om.email, om.password)), userId: om.user.id };
});
afterAll(async () => {
  await box?.client.endAsync();
  await srv.ctx.models.OncallRotation.destroy({ where: { id: rotationId } });
  await srv.stop();
});

describe('box air above the high limit, end to end through MQTT', () => {
  it('raises box-air-high as unacknowledged once readings stay above the limit longer than the alarm delay', async () => {
    // 8 °C against a 5 °C high limit for 15 min of reading time, alarm delay 10 min (box settings of the test).
    await holdAbove(box, 8, 15);
    const alarm = await waitForAlarm(srv, box.box.id, 'box-air-high');
    alarmId = alarm.id;
    expect(alarm.state).toBe('unacknowledged');
    expect(alarm.conditionActive).toBe(true);
    // Raised on reading time: at least the delay after the first reading above the limit.
    const firstAboveMs = Date.now() - 15 * 60_000;
    expect(alarm.raisedAt.getTime() - firstAboveMs).toBeGreaterThanOrEqual(10 * 60_000 - 60_000);
    const res = await call(s.technician, 'get', `/api/v1/alarms?boxId=${box.box.id}&rule=box-air-high`);
    expectStatus(res, 200);
    expect(res.body.items.map((a: { id: number; state: string }) => [a.id, a.state])).toEqual([[alarmId, 'unacknowledged']]);
  });

  it('mails the on-call technician and the manager of the site a single-use acknowledgement link', async () => {
    const techToken = await waitFor(() => ackTokenInMail(srv, techEmail, alarmId));
    const mgrToken = await waitFor(() => ackTokenInMail(srv, managerEmail, alarmId));
    expect(techToken).not.toBe(mgrToken);
    const detail = await call(s.technician, 'get', `/api/v1/alarms/${alarmId}`);
    expectStatus(detail, 200);
    const sent = detail.body.notifications.filter((n: { status: string; level: number }) => n.status === 'sent' && n.level === 0).map((n: { recipient: string }) => n.recipient);
    expect(sent).toEqual(expect.arrayContaining([techEmail, managerEmail]));
    expect(detail.body.transitions.map((t: { action: string; toState: string }) => [t.action, t.toState])).toEqual([['raise', 'unacknowledged']]);
  });

  it('hides the alarm from a manager of another customer: 404 on it, on its link, and absent from the list', async () => {
    expectProblem(await call(otherManager, 'get', `/api/v1/alarms/${alarmId}`), 404, 'not-found');
    const list = await call(otherManager, 'get', '/api/v1/alarms?pageSize=200');
    expectStatus(list, 200);
    expect(list.body.items.map((a: { id: number }) => a.id)).not.toContain(alarmId);
    const token = ackTokenInMail(srv, techEmail, alarmId) ?? '';
    expectProblem(await call(otherManager, 'post', '/api/v1/alarms/ack-link', { token }), 404, 'not-found');
    expectProblem(await call(otherManager, 'post', `/api/v1/alarms/${alarmId}/ack`, {}), 404, 'not-found');
  });

  it('acknowledges through the e-mailed link once; the second use answers 410', async () => {
    const token = ackTokenInMail(srv, techEmail, alarmId) ?? '';
    const first = await call(s.technician, 'post', '/api/v1/alarms/ack-link', { token });
    expectStatus(first, 200);
    expect(first.body.state).toBe('acknowledged');
    expect(first.body.acknowledgedBy.id).toBe(s.technician.userId);
    expectProblem(await call(s.technician, 'post', '/api/v1/alarms/ack-link', { token }), 410, 'ack-link-used');
    const audit = await srv.ctx.models.AuditEntry.findOne({ where: { action: 'alarm.ack', entityId: String(alarmId) } });
    expect(audit?.userId).toBe(s.technician.userId);
  });

  it('refuses a malformed link token with a validation problem', async () => {
    expectProblem(await call(s.technician, 'post', '/api/v1/alarms/ack-link', { token: 'x' }), 400, 'validation');
  });
});

describe('POST /api/v1/alarms/:id/ack', () => {
  it('moves an alarm to acknowledged with a transition row naming the technician and the note', async () => {
    const other = await boxWithController(srv);
    await holdAbove(other, 9, 12);
    const alarm = await waitForAlarm(srv, other.box.id, 'box-air-high');
    const res = await call(s.technician, 'post', `/api/v1/alarms/${alarm.id}/ack`, { note: 'door left open by delivery' });
    expectStatus(res, 200);
    expect(res.body.state).toBe('acknowledged');
    const rows = await srv.ctx.models.AlarmTransition.findAll({ where: { alarmId: alarm.id, action: 'ack' } });
    expect(rows.map((r) => [r.fromState, r.toState, r.userId, r.note])).toEqual([['unacknowledged', 'acknowledged', s.technician.userId, 'door left open by delivery']]);
    expectProblem(await call(s.technician, 'post', `/api/v1/alarms/${alarm.id}/ack`, {}), 409, 'conflict');
    await other.client.endAsync();
  });

  it('lists the alarms of their own customer to a manager', async () => {
    const res = await call(s.manager, 'get', `/api/v1/alarms?boxId=${box.box.id}`);
    expectStatus(res, 200);
    expect(res.body.items.map((a: { id: number }) => a.id)).toContain(alarmId);
  });

  it('refuses shelving by a manager', async () => {
    expectProblem(await call(s.manager, 'post', `/api/v1/alarms/${alarmId}/shelve`, { minutes: 30, reason: 'contractor on the way' }), 403, 'forbidden');
  });
});

describe('a server restart', () => {
  it('keeps the alarm, its state and the armed condition after stop and start against the same database', async () => {
    await box.client.endAsync();
    await srv.stop();
    srv = await startTelemetryServer();
    const a = await srv.ctx.models.Alarm.findByPk(alarmId);
    expect(a?.state).toBe('acknowledged');
    expect(a?.conditionActive).toBe(true);
    expect(srv.alarms?.activeRules(box.box.id)).toContain('box-air-high');
    s = await signInRoles(srv, box.customer.id);
    const res = await call(s.manager, 'get', `/api/v1/alarms/${alarmId}`);
    expectStatus(res, 200);
    expect(res.body.state).toBe('acknowledged');
    expect(res.body.transitions.map((t: { action: string }) => t.action)).toEqual(['raise', 'ack']);
    box.client = await connectController(srv.mqttUrl ?? '', box.serial, box.secret);
  });
});
