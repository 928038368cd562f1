import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { factories, signIn } from './helpers/app';
import { publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';
import { call, expectProblem, expectStatus, signInRoles, type Session, type Sessions } from './helpers/roles';
import { boxWithController, waitForAlarm } from './helpers/alarms';

let srv: RunningServer;
let s: Sessions;
let box: Awaited<ReturnType<typeof boxWithController>>;
let otherManager: Session;

const rulesUrl = (boxId: number) => `/api/v1/boxes/${boxId}/alarm-rules`;
const put = (who: Session, boxId: number, ruleId: string, body: object) => who.agent.put(`${rulesUrl(boxId)}/${ruleId}`).set('x-csrf-token', who.csrf).send(body);
const overrideRow = (boxId: number, ruleId: string) => srv.ctx.models.BoxRuleOverride.findOne({ where: { boxId, ruleId: ruleId as 'box-air-high' } });
const auditActions = async (boxId: number) => (await srv.ctx.models.AuditEntry.findAll({ where: { entityType: 'box', entityId: String(boxId) }, order: [['id', 'ASC']] })).map((e) => e.action);

beforeAll(async () => {
  srv = await startTelemetryServer();
  box = await boxWithController(srv);
  s = await signInRoles(srv, box.customer.id);
  const f = factories(srv);
  const other = await f.customer();
  const om = await f.user('manager', other.id);
  otherManager = { ...(await signIn(srv, om.email, om.password)), userId: om.user.id };
});
afterAll(async () => {
  await box?.client.endAsync();
  await srv.stop();
});

describe('GET /api/v1/boxes/:id/alarm-rules', () => {
  it('lists every rule with its default, the source of the default, no override and the effective value', async () => {
    const res = await call(s.technician, 'get', rulesUrl(box.box.id));
    expectStatus(res, 200);
    expect(res.body.boxId).toBe(box.box.id);
    expect(res.body.rules).toHaveLength(12);
    const high = res.body.rules.find((r: { ruleId: string }) => r.ruleId === 'box-air-high');
    // The box's own high limit (5 °C = 41 °F, FDA Food Code 3-501.16(A)(2)) and alarm delay (10 min, the test box).
    expect(high.default).toMatchObject({ enabled: true, threshold: 5, delayMin: 10 });
    expect(high.defaultSource).toMatch(/FDA Food Code 3-501\.16\(A\)\(2\)/);
    expect(high.override).toBeNull();
    expect(high.effective).toEqual(high.default);
    expect(high.threshold).toMatchObject({ unit: 'C' });
    const door = res.body.rules.find((r: { ruleId: string }) => r.ruleId === 'door-open');
    expect(door.threshold).toBeNull();
  });

  it('lets the manager of the box read the rules', async () => {
    expectStatus(await call(s.manager, 'get', rulesUrl(box.box.id)), 200);
  });

  it('answers 404 to a manager of another customer and 401 without a sign-in', async () => {
    expectProblem(await call(otherManager, 'get', rulesUrl(box.box.id)), 404, 'not-found');
    expectProblem(await call(s.anonymous, 'get', rulesUrl(box.box.id)), 401, 'unauthenticated');
  });
});

describe('PUT and DELETE /api/v1/boxes/:id/alarm-rules/:ruleId', () => {
  it('stores a technician’s override, answers default, override and effective value, and audits it', async () => {
    const res = await put(s.technician, box.box.id, 'superheat-high', { threshold: 12, delayMin: 20, priority: 'high' });
    expectStatus(res, 200);
    expect(res.body.override).toEqual({ threshold: 12, delayMin: 20, priority: 'high' });
    expect(res.body.effective).toMatchObject({ threshold: 12, delayMin: 20, priority: 'high', clearDelayMin: res.body.default.clearDelayMin });
    // Default: the box's superheat target 3.3 K (test box) + the 5 K band of defaults.ts (our choice).
    expect(res.body.default.threshold).toBeCloseTo(8.3, 6);
    const row = await overrideRow(box.box.id, 'superheat-high');
    expect(row).toMatchObject({ threshold: 12, delayMin: 20, priority: 'high', clearDelayMin: null, updatedBy: s.technician.userId });
    expect(await auditActions(box.box.id)).toContain('box.alarm-rule.override');
    const list = await call(s.manager, 'get', rulesUrl(box.box.id));
    const sh = list.body.rules.find((r: { ruleId: string }) => r.ruleId === 'superheat-high');
    expect(sh.overrideUpdatedBy).toMatchObject({ id: s.technician.userId });
  });

  it('refuses a manager (403) and stores nothing', async () => {
    expectProblem(await put(s.manager, box.box.id, 'door-open', { delayMin: 30 }), 403, 'forbidden');
    expectProblem(await call(s.manager, 'delete', `${rulesUrl(box.box.id)}/superheat-high`), 403, 'forbidden');
    expect(await overrideRow(box.box.id, 'door-open')).toBeNull();
    expect(await overrideRow(box.box.id, 'superheat-high')).not.toBeNull();
  });

  it('answers 404 for an unknown rule or box', async () => {
    expectProblem(await put(s.technician, box.box.id, 'box-air-warm', { delayMin: 5 }), 404, 'not-found');
    expectProblem(await put(s.technician, 999_999, 'door-open', { delayMin: 5 }), 404, 'not-found');
  });

  it('refuses values out of range with field errors: delay over a day, a limit outside the box range, a threshold for door-open, a fractional count, an empty body', async () => {
    const cases: [string, object, string][] = [
      ['door-open', { delayMin: 1441 }, 'delayMin'],
      ['door-open', { delayMin: -1 }, 'delayMin'],
      ['box-air-high', { threshold: 60 }, 'threshold'],
      ['door-open', { threshold: 3 }, 'threshold'],
      ['short-cycling', { threshold: 7.5 }, 'threshold'],
      ['box-air-high', { deadband: 50 }, 'deadband'],
      ['box-air-high', { priority: 'urgent' }, 'priority'],
      ['box-air-high', { colour: 'red' }, '_'],
      ['box-air-high', {}, '_'],
    ];
    for (const [ruleId, body, field] of cases) {
      const res = await put(s.technician, box.box.id, ruleId, body);
      expectProblem(res, 400, 'validation');
      expect(Object.keys(res.body.errors), `${ruleId} ${JSON.stringify(body)}`).toContain(field);
    }
    expect(await overrideRow(box.box.id, 'door-open')).toBeNull();
    expect(await overrideRow(box.box.id, 'box-air-high')).toBeNull();
  });

  it('refuses a cooler high limit at or below its low limit (422) and a low limit above the high limit', async () => {
    // Test box: low limit 0 °C, high limit 5 °C.
    const high = await put(s.technician, box.box.id, 'box-air-high', { threshold: -1 });
    expectProblem(high, 422, 'rule-limits-crossed');
    expect(high.body.detail).toMatch(/high limit \(-1 °C\) must be above the low limit \(0 °C\)/);
    const low = await put(s.technician, box.box.id, 'box-air-low', { threshold: 6 });
    expectProblem(low, 422, 'rule-limits-crossed');
    expect(await overrideRow(box.box.id, 'box-air-high')).toBeNull();
    expect(await overrideRow(box.box.id, 'box-air-low')).toBeNull();
  });

  it('returns a rule to its default on DELETE and audits it', async () => {
    const res = await call(s.technician, 'delete', `${rulesUrl(box.box.id)}/superheat-high`);
    expectStatus(res, 204);
    expect(await overrideRow(box.box.id, 'superheat-high')).toBeNull();
    const list = await call(s.technician, 'get', rulesUrl(box.box.id));
    const sh = list.body.rules.find((r: { ruleId: string }) => r.ruleId === 'superheat-high');
    expect(sh.override).toBeNull();
    expect(sh.effective).toEqual(sh.default);
    expect(await auditActions(box.box.id)).toContain('box.alarm-rule.default');
  });
});

describe('an override of the cooler high limit in the running engine', () => {
  /** Publishes one reading a minute at boxAirC for minutes i = from…to after t0Ms, then waits until the engine has seen them. */
  async function publishMinutes(t0Ms: number, from: number, to: number, boxAirC: number): Promise<void> {
    const before = (await storedRows(srv, box.box.id)).length;
    for (let i = from; i <= to; i++) await publishTelemetry(box.client, box.serial, reading({ ts: new Date(t0Ms + i * 60_000).toISOString(), boxAirC }));
    await waitFor(async () => (await storedRows(srv, box.box.id)).length >= before + (to - from + 1));
    await srv.alarms?.settled(box.box.id);
  }

  it('keeps box-air-high quiet at 6 °C under an 8 °C override, and raises it once the override is removed', async () => {
    const t0Ms = Date.now() - 45 * 60_000;
    expectStatus(await put(s.technician, box.box.id, 'box-air-high', { threshold: 8 }), 200);
    // 21 min at 6 °C: above the 5 °C default (41 °F, FDA Food Code 3-501.16(A)(2)) for twice the 10-min delay, below the override.
    await publishMinutes(t0Ms, 0, 20, 6);
    expect(srv.alarms?.activeRules(box.box.id)).not.toContain('box-air-high');
    expect(await srv.ctx.models.Alarm.count({ where: { boxId: box.box.id, ruleId: 'box-air-high' } })).toBe(0);

    expectStatus(await call(s.technician, 'delete', `${rulesUrl(box.box.id)}/box-air-high`), 204);
    await publishMinutes(t0Ms, 21, 40, 6);
    const alarm = await waitForAlarm(srv, box.box.id, 'box-air-high');
    expect(alarm.state).toBe('unacknowledged');
    // The delay ran from the first reading judged against the default limit (minute 21), not from minute 0.
    expect(alarm.raisedAt.getTime()).toBeGreaterThanOrEqual(t0Ms + 31 * 60_000);
  });
});
