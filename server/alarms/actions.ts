/**
 * What changes a stored alarm: rule-engine condition events (raise, clear, priority), people
 * (ack, shelve, unshelve, ack by link), shelving expiry and escalation. Every state change goes
 * through the shared lifecycle, is written with a transition row in one transaction, and is
 * published on the bus as `alarm`.
 */
import { Op, type Transaction } from 'sequelize';
import { ALARM_PRIORITIES, type AlarmAction, type AlarmState, type ConditionEvent } from '../../shared/alarms/types';
import type { AlarmDto } from '../../shared/schemas/alarms';
import type { SessionUser } from '../../shared/schemas/auth';
import { AlarmTransitionError, needsAck, nextState } from '../../shared/alarms/lifecycle';
import type { AppContext } from '../context';
import type { Alarm } from '../models/alarms';
import { HttpProblem, problems } from '../http/problem';
import { scopeWhere } from '../auth/guards';
import { tokenDigest } from '../auth/passwords';
import { auditBy } from '../audit/service';
import { toAlarmDto } from './present';
import { notifyRecipients } from './notify';
import { inQuietHours, managersOf, MANAGER_RULES, policyFor, quietHoursEndMs, recipientsFor } from './oncall';

/** A cleared condition that comes back within this window re-opens its alarm instead of raising a new one (ms; common practice). */
export const REOPEN_WINDOW_MS = 30 * 60_000;
const HIGHEST = ALARM_PRIORITIES[ALARM_PRIORITIES.length - 1];

/** The box facts an alarm row copies (ids for scoping, names for notices). */
export interface AlarmBox {
  id: number;
  siteId: number;
  customerId: number;
  name: string;
  siteName: string;
}

async function transition(ctx: AppContext, t: Transaction, alarm: Alarm, action: AlarmAction, to: AlarmState, at: Date, userId: number | null, note: string | null): Promise<void> {
  await ctx.models.AlarmTransition.create({ alarmId: alarm.id, at, action, fromState: alarm.state, toState: to, userId, note }, { transaction: t });
}

/** Publishes the alarm's current DTO on the bus (the live hub forwards it to the tenant). */
export async function publishAlarm(ctx: AppContext, alarm: Alarm): Promise<AlarmDto> {
  const dto = await toAlarmDto(ctx.models, alarm);
  ctx.bus.emit('alarm', { boxId: alarm.boxId, customerId: alarm.customerId, alarm: dto });
  return dto;
}

/**
 * Applies one condition event of a box; returns the alarm it touched and whether it now waits
 * for a first notice (new, re-opened, or raised again while waiting for acknowledgement).
 */
export async function applyCondition(ctx: AppContext, box: AlarmBox, ev: ConditionEvent): Promise<{ alarm: Alarm; notify: boolean } | null> {
  const at = new Date(ev.atMs);
  return ctx.sequelize.transaction(async (t) => {
    const last = await ctx.models.Alarm.findOne({ where: { boxId: box.id, ruleId: ev.ruleId }, order: [['id', 'DESC']], lock: t.LOCK.UPDATE, transaction: t });
    if (ev.kind === 'priority') {
      if (!last || !last.conditionActive) return null;
      await last.update({ priority: ev.priority, value: ev.value, message: ev.message }, { transaction: t });
      return { alarm: last, notify: false };
    }
    if (ev.kind === 'clear') {
      if (!last || !last.conditionActive) return null;
      const to = safeNext(last.state, 'clear', false);
      if (to !== null && to !== last.state) await transition(ctx, t, last, 'clear', to, at, null, null);
      await last.update({ state: to ?? last.state, conditionActive: false, clearedAt: at, nextEscalationAt: to !== null && needsAck(to) ? last.nextEscalationAt : null }, { transaction: t });
      return { alarm: last, notify: false };
    }
    // raise
    const reopen = last && (last.state !== 'normal' || (last.clearedAt !== null && ev.atMs - last.clearedAt.getTime() <= REOPEN_WINDOW_MS));
    if (last && reopen) {
      if (last.conditionActive) return null; // already raised (e.g. replayed after a restart)
      const to = safeNext(last.state, 'raise', true) ?? last.state;
      const moved = to !== last.state;
      if (moved) await transition(ctx, t, last, 'raise', to, at, null, 'condition returned');
      const waits = needsAck(to);
      await last.update(
        {
          state: to,
          conditionActive: true,
          clearedAt: null,
          priority: ev.priority,
          value: ev.value,
          message: ev.message,
          reopenCount: last.reopenCount + 1,
          ...(waits && moved ? { escalationStep: -1, nextEscalationAt: new Date(), acknowledgedAt: null, acknowledgedBy: null } : {}),
        },
        { transaction: t },
      );
      return { alarm: last, notify: waits && moved };
    }
    const to = nextState('normal', 'raise', true);
    const alarm = await ctx.models.Alarm.create(
      {
        boxId: box.id,
        siteId: box.siteId,
        customerId: box.customerId,
        ruleId: ev.ruleId,
        priority: ev.priority,
        state: 'normal',
        conditionActive: true,
        value: ev.value,
        message: ev.message,
        raisedAt: at,
        clearedAt: null,
        acknowledgedAt: null,
        acknowledgedBy: null,
        shelvedUntil: null,
        nextEscalationAt: needsAck(to) ? new Date() : null,
      },
      { transaction: t },
    );
    await transition(ctx, t, alarm, 'raise', to, at, null, null);
    await alarm.update({ state: to }, { transaction: t });
    return { alarm, notify: needsAck(to) };
  });
}

function safeNext(state: AlarmState, action: AlarmAction, conditionActive: boolean): AlarmState | null {
  try {
    return nextState(state, action, conditionActive);
  } catch (err) {
    if (err instanceof AlarmTransitionError) return null;
    throw err;
  }
}

export interface AlarmActionDeps {
  ctx: AppContext;
  requestId: string | null;
}

/** An alarm the actor may see, or a 404 problem (another tenant's alarm is "not found"). */
export async function loadScopedAlarm(ctx: AppContext, actor: SessionUser, id: number, t?: Transaction): Promise<Alarm> {
  const a = await ctx.models.Alarm.findOne({ where: { [Op.and]: [{ id }, scopeWhere(actor)] }, transaction: t, lock: t ? t.LOCK.UPDATE : undefined });
  if (!a) throw problems.notFound('alarm');
  return a;
}

export type PersonAction = { action: 'ack'; note?: string } | { action: 'shelve'; minutes: number; reason: string } | { action: 'unshelve'; note?: string };

/** Applies a person's action to an alarm (locked, scoped); 409 when the lifecycle refuses it. `token`: the ack link that must be unused. */
export async function actOnAlarm(deps: AlarmActionDeps, actor: SessionUser, id: number, input: PersonAction, token?: string): Promise<AlarmDto> {
  const { ctx } = deps;
  const now = new Date();
  const alarm = await ctx.sequelize.transaction(async (t) => {
    const a = await loadScopedAlarm(ctx, actor, id, t);
    if (token !== undefined) await consumeToken(ctx, t, a.id, token, actor, now);
    const to = safeNext(a.state, input.action, a.conditionActive);
    if (to === null) throw problems.conflict(`This alarm is ${a.state}; it cannot take "${input.action}" now.`);
    const note = input.action === 'shelve' ? input.reason : (input.note ?? null);
    const from = a.state;
    await transition(ctx, t, a, input.action, to, now, actor.id, note);
    const values: Partial<Alarm> = { state: to };
    if (input.action === 'ack') Object.assign(values, { acknowledgedAt: now, acknowledgedBy: actor.id, nextEscalationAt: null });
    if (input.action === 'shelve') Object.assign(values, { shelvedUntil: new Date(now.getTime() + input.minutes * 60_000), nextEscalationAt: null });
    if (input.action === 'unshelve') Object.assign(values, { shelvedUntil: null, ...(needsAck(to) ? { escalationStep: -1, nextEscalationAt: now } : {}) });
    await a.update(values, { transaction: t });
    await auditBy(ctx.models, { userId: actor.id, requestId: deps.requestId }, { action: `alarm.${input.action}`, entityType: 'alarm', entityId: a.id, customerId: a.customerId, detail: { from, to, note, viaLink: token !== undefined } }, t);
    return a;
  });
  return publishAlarm(ctx, alarm);
}

async function consumeToken(ctx: AppContext, t: Transaction, alarmId: number, token: string, actor: SessionUser, now: Date): Promise<void> {
  const row = await ctx.models.AlarmAckToken.findOne({ where: { tokenHash: tokenDigest(token), alarmId }, lock: t.LOCK.UPDATE, transaction: t });
  if (!row) throw problems.notFound('acknowledgement link');
  if (row.usedAt !== null) throw new HttpProblem(410, 'ack-link-used', 'Link already used', 'This acknowledgement link has been used; open the alarm to see who acknowledged it.');
  if (row.expiresAt.getTime() <= now.getTime()) throw new HttpProblem(410, 'ack-link-expired', 'Link expired', 'This acknowledgement link has expired; acknowledge the alarm from its page.');
  await row.update({ usedAt: now, usedBy: actor.id }, { transaction: t });
}

/** The alarm id an ack-link token belongs to (404 when unknown). */
export async function alarmIdOfToken(ctx: AppContext, token: string): Promise<number> {
  const row = await ctx.models.AlarmAckToken.findOne({ where: { tokenHash: tokenDigest(token) } });
  if (!row) throw problems.notFound('acknowledgement link');
  return row.alarmId;
}

/** Moves shelved alarms whose time is up out of shelving (ISA-18.2: shelving is time-limited). */
export async function expireShelving(ctx: AppContext, nowMs: number, boxIds?: readonly number[]): Promise<number> {
  const due = await ctx.models.Alarm.findAll({ where: { state: 'shelved', shelvedUntil: { [Op.lte]: new Date(nowMs) }, ...(boxIds ? { boxId: [...boxIds] } : {}) }, attributes: ['id'] });
  let n = 0;
  for (const { id } of due) {
    const a = await ctx.sequelize.transaction(async (t) => {
      const row = await ctx.models.Alarm.findByPk(id, { lock: t.LOCK.UPDATE, transaction: t });
      if (!row || row.state !== 'shelved') return null;
      const to = safeNext(row.state, 'shelve-expired', row.conditionActive);
      if (to === null) return null;
      await transition(ctx, t, row, 'shelve-expired', to, new Date(nowMs), null, null);
      await row.update({ state: to, shelvedUntil: null, ...(needsAck(to) && row.conditionActive ? { escalationStep: -1, nextEscalationAt: new Date(nowMs) } : {}) }, { transaction: t });
      return row;
    });
    if (a) {
      n++;
      await publishAlarm(ctx, a);
    }
  }
  return n;
}

/**
 * Sends the next escalation step of one alarm if it is due: level 0 at once (plus the customer's
 * managers for temperature alarms), each further level after the policy's delay, the last level
 * repeated for the highest priority; low priority waits out quiet hours. Returns the level sent or null.
 */
export async function escalateAlarm(ctx: AppContext, alarmId: number, nowMs: number): Promise<number | null> {
  const a = await ctx.models.Alarm.findByPk(alarmId);
  if (!a || a.nextEscalationAt === null || a.nextEscalationAt.getTime() > nowMs) return null;
  const policy = await policyFor(ctx.models, a.priority);
  const step = a.escalationStep + 1;
  const stillWaiting = needsAck(a.state) && a.conditionActive;
  const canRepeat = policy.repeatHighest && a.priority === HIGHEST;
  if (!stillWaiting || (step >= policy.levels.length && !canRepeat)) {
    await ctx.models.Alarm.update({ nextEscalationAt: null }, { where: { id: a.id, escalationStep: a.escalationStep } });
    return null;
  }
  if (a.priority === 'low' && inQuietHours(policy.quietHours, nowMs) && policy.quietHours) {
    await ctx.models.Alarm.update({ nextEscalationAt: new Date(quietHoursEndMs(policy.quietHours, nowMs)) }, { where: { id: a.id, escalationStep: a.escalationStep } });
    return null;
  }
  const level = Math.min(step, policy.levels.length - 1);
  const more = step + 1 < policy.levels.length || canRepeat;
  // Claim the step first so two overlapping ticks never send the same level twice.
  const [claimed] = await ctx.models.Alarm.update(
    { escalationStep: step, nextEscalationAt: more ? new Date(nowMs + policy.escalateAfterMin * 60_000) : null },
    { where: { id: a.id, escalationStep: a.escalationStep } },
  );
  if (claimed !== 1) return null;
  const recipients = await recipientsFor(ctx.models, policy.levels[level] ?? [], nowMs);
  if (step === 0 && MANAGER_RULES.has(a.ruleId)) for (const m of await managersOf(ctx.models, a.customerId)) if (!recipients.some((r) => r.id === m.id)) recipients.push(m);
  const box = await ctx.models.Box.findByPk(a.boxId, { attributes: ['name'] });
  const site = await ctx.models.Site.findByPk(a.siteId, { attributes: ['name'] });
  await notifyRecipients(ctx, a, { boxName: box?.name ?? `box ${a.boxId}`, siteName: site?.name ?? `site ${a.siteId}` }, recipients, level, nowMs);
  return level;
}

/** Sends every escalation step due at the instant; returns how many were sent. */
export async function escalateDue(ctx: AppContext, nowMs: number, boxIds?: readonly number[]): Promise<number> {
  const due = await ctx.models.Alarm.findAll({ where: { nextEscalationAt: { [Op.lte]: new Date(nowMs) }, ...(boxIds ? { boxId: [...boxIds] } : {}) }, attributes: ['id'], order: [['id', 'ASC']], limit: 500 });
  let n = 0;
  for (const { id } of due) if ((await escalateAlarm(ctx, id, nowMs)) !== null) n++;
  return n;
}

/** Who started or ended a maintenance window (null: the window ran out) and their note. */
export interface MaintenanceActor {
  userId: number | null;
  note: string | null;
}

/**
 * Suppresses every open alarm of a box for maintenance (ISA-18.2 "suppressed by design"): one
 * transition row each with who, when and note, escalation stopped, each published. Returns how many moved.
 */
export async function suppressBoxAlarms(ctx: AppContext, boxId: number, by: MaintenanceActor, at: Date): Promise<number> {
  const open = await ctx.models.Alarm.findAll({ where: { boxId, state: { [Op.notIn]: ['normal', 'suppressed', 'out-of-service'] } }, attributes: ['id'] });
  let n = 0;
  for (const { id } of open) {
    const a = await ctx.sequelize.transaction(async (t) => {
      const row = await ctx.models.Alarm.findByPk(id, { lock: t.LOCK.UPDATE, transaction: t });
      if (!row) return null;
      const to = safeNext(row.state, 'suppress', row.conditionActive);
      if (to === null || to === row.state) return null;
      await transition(ctx, t, row, 'suppress', to, at, by.userId, by.note ?? 'box in maintenance');
      await row.update({ state: to, shelvedUntil: null, nextEscalationAt: null }, { transaction: t });
      return row;
    });
    if (a) {
      n++;
      await publishAlarm(ctx, a);
    }
  }
  return n;
}

/**
 * Ends suppression of a box's alarms when maintenance ends: each goes back to unacknowledged when
 * its rule is active now (`activeRules`, from the engine) or to normal when not; the ones that
 * wait for acknowledgement escalate again from the first level. Returns how many moved.
 */
export async function unsuppressBoxAlarms(ctx: AppContext, boxId: number, activeRules: readonly string[], by: MaintenanceActor, at: Date): Promise<number> {
  const held = await ctx.models.Alarm.findAll({ where: { boxId, state: 'suppressed' }, attributes: ['id'] });
  let n = 0;
  for (const { id } of held) {
    const a = await ctx.sequelize.transaction(async (t) => {
      const row = await ctx.models.Alarm.findByPk(id, { lock: t.LOCK.UPDATE, transaction: t });
      if (!row || row.state !== 'suppressed') return null;
      const active = activeRules.includes(row.ruleId);
      const to = safeNext(row.state, 'unsuppress', active);
      if (to === null) return null;
      await transition(ctx, t, row, 'unsuppress', to, at, by.userId, by.note ?? 'maintenance ended');
      const values: Partial<Alarm> = { state: to, conditionActive: active };
      if (!active && row.conditionActive) values.clearedAt = at;
      if (needsAck(to)) Object.assign(values, { escalationStep: -1, nextEscalationAt: at, acknowledgedAt: null, acknowledgedBy: null });
      await row.update(values, { transaction: t });
      return row;
    });
    if (a) {
      n++;
      await publishAlarm(ctx, a);
    }
  }
  return n;
}
