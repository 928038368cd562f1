/**
 * Who is on call at an instant (weekly shifts per rotation, overrides replacing them), who each
 * escalation level reaches, which policy applies to an alarm and whether quiet hours hold.
 */
import { Op } from 'sequelize';
import type { AlarmPriority, AlarmRuleId } from '../../shared/alarms/types';
import { OncallShift, type EscalationPolicyBody, type EscalationTarget, type QuietHours } from '../../shared/schemas/oncall';
import type { Models, User } from '../models';
import type { EscalationPolicy, OncallRotation } from '../models/alarms';

const MIN_PER_DAY = 1440;
const MIN_PER_WEEK = 7 * MIN_PER_DAY;
const WEEKDAYS: Record<string, number> = { Mon: 1, Tue: 2, Wed: 3, Thu: 4, Fri: 5, Sat: 6, Sun: 7 };

/** The built-in policy when none is stored: on call at once, then every technician, then the admins, 15 min apart (common practice). */
export const DEFAULT_POLICY: EscalationPolicyBody = {
  name: 'Built-in default',
  priorities: null,
  escalateAfterMin: 15,
  levels: [['oncall'], ['technicians'], ['admins']],
  repeatHighest: true,
  quietHours: null,
};

/** Rules whose alarms also go to the managers of the box's customer (food safety is theirs too). */
export const MANAGER_RULES: ReadonlySet<AlarmRuleId> = new Set<AlarmRuleId>(['box-air-high', 'box-air-low']);

/** Local ISO weekday (1–7) and minute of the day (0–1439) of an instant in a time zone. */
export function localWeekMinute(atMs: number, timeZone: string): { weekday: number; minuteOfDay: number } {
  const parts = new Intl.DateTimeFormat('en-US', { timeZone, weekday: 'short', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).formatToParts(new Date(atMs));
  const get = (t: string) => parts.find((p) => p.type === t)?.value ?? '';
  return { weekday: WEEKDAYS[get('weekday')] ?? 1, minuteOfDay: (Number(get('hour')) % 24) * 60 + Number(get('minute')) };
}

const hhmm = (s: string) => Number(s.slice(0, 2)) * 60 + Number(s.slice(3, 5));

/** True when the shift covers the instant (shifts may run past midnight and past Sunday). */
export function shiftCovers(shift: OncallShift, atMs: number, timeZone: string): boolean {
  const { weekday, minuteOfDay } = localWeekMinute(atMs, timeZone);
  const now = (weekday - 1) * MIN_PER_DAY + minuteOfDay;
  const start = (shift.weekday - 1) * MIN_PER_DAY + hhmm(shift.start);
  return (((now - start) % MIN_PER_WEEK) + MIN_PER_WEEK) % MIN_PER_WEEK < shift.durationMin;
}

/** True when quiet hours hold at the instant (start ≤ local time < end, wrapping midnight). */
export function inQuietHours(q: QuietHours | null, atMs: number): boolean {
  if (!q) return false;
  const m = localWeekMinute(atMs, q.timeZone).minuteOfDay;
  const s = hhmm(q.start);
  const e = hhmm(q.end);
  return s <= e ? m >= s && m < e : m >= s || m < e;
}

/** The instant (ms) quiet hours next end, searched minute by minute up to a day ahead. */
export function quietHoursEndMs(q: QuietHours, fromMs: number): number {
  const step = 60_000;
  let t = Math.floor(fromMs / step) * step + step;
  for (let i = 0; i < MIN_PER_DAY && inQuietHours(q, t); i++) t += step;
  return t;
}

/** The stored weekly shifts of a rotation (rows written only through the RotationBody schema). */
export function rotationShifts(r: OncallRotation): OncallShift[] {
  const parsed = OncallShift.array().safeParse(JSON.parse(r.shifts));
  return parsed.success ? parsed.data : [];
}

export interface OnCallEntry {
  user: User;
  rotationId: number;
  viaOverride: boolean;
}

/** Enabled technicians and admins on call at the instant, across every rotation; an active override replaces its rotation's shifts. */
export async function onCallAt(models: Models, atMs: number): Promise<OnCallEntry[]> {
  const at = new Date(atMs);
  const rotations = await models.OncallRotation.findAll({ order: [['id', 'ASC']] });
  const overrides = await models.OncallOverride.findAll({ where: { startsAt: { [Op.lte]: at }, endsAt: { [Op.gt]: at } } });
  const picks: Array<{ userId: number; rotationId: number; viaOverride: boolean }> = [];
  for (const r of rotations) {
    const own = overrides.filter((o) => o.rotationId === r.id);
    if (own.length > 0) for (const o of own) picks.push({ userId: o.userId, rotationId: r.id, viaOverride: true });
    else for (const s of rotationShifts(r)) if (shiftCovers(s, atMs, r.timeZone)) picks.push({ userId: s.userId, rotationId: r.id, viaOverride: false });
  }
  if (picks.length === 0) return [];
  const users = await models.User.findAll({ where: { id: [...new Set(picks.map((p) => p.userId))], disabled: false, role: ['technician', 'admin'] } });
  const byId = new Map(users.map((u) => [u.id, u]));
  const seen = new Set<number>();
  const out: OnCallEntry[] = [];
  for (const p of picks) {
    const user = byId.get(p.userId);
    if (!user || seen.has(user.id)) continue;
    seen.add(user.id);
    out.push({ user, rotationId: p.rotationId, viaOverride: p.viaOverride });
  }
  return out;
}

/** The people one escalation level reaches at the instant; nobody on call falls back to every technician. */
export async function recipientsFor(models: Models, targets: EscalationTarget[], atMs: number): Promise<User[]> {
  const out = new Map<number, User>();
  for (const t of targets) {
    let users: User[];
    if (t === 'oncall') {
      users = (await onCallAt(models, atMs)).map((e) => e.user);
      if (users.length === 0) users = await models.User.findAll({ where: { role: 'technician', disabled: false } });
    } else {
      users = await models.User.findAll({ where: { role: t === 'admins' ? 'admin' : 'technician', disabled: false } });
    }
    for (const u of users) out.set(u.id, u);
  }
  return [...out.values()];
}

/** The enabled managers of a customer (contacts for temperature alarms of its sites). */
export async function managersOf(models: Models, customerId: number): Promise<User[]> {
  return models.User.findAll({ where: { role: 'manager', customerId, disabled: false } });
}

/** A stored policy as its body shape (rows written only through EscalationPolicyBody). */
export function policyBody(p: EscalationPolicy): EscalationPolicyBody {
  return {
    name: p.name,
    priorities: p.priorities ? (p.priorities.split(',') as AlarmPriority[]) : null,
    escalateAfterMin: p.escalateAfterMin,
    levels: JSON.parse(p.levels) as EscalationTarget[][],
    repeatHighest: p.repeatHighest,
    quietHours: p.quietHours ? (JSON.parse(p.quietHours) as QuietHours) : null,
  };
}

/** The policy for a priority: the first naming it, else the first default (priorities null), else DEFAULT_POLICY. */
export async function policyFor(models: Models, priority: AlarmPriority): Promise<EscalationPolicyBody> {
  const all = (await models.EscalationPolicy.findAll({ order: [['id', 'ASC']] })).map(policyBody);
  return all.find((p) => p.priorities?.includes(priority)) ?? all.find((p) => p.priorities === null) ?? DEFAULT_POLICY;
}
