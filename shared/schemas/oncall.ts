/** On-call rotations (weekly shifts with overrides) and escalation policies. Shared by server and client. */
import { z } from 'zod';
import { ALARM_PRIORITIES, type AlarmPriority } from '../alarms/types';
import { TimeZone } from './common';

const HHMM = z.string().regex(/^([01]\d|2[0-3]):[0-5]\d$/, 'Use HH:MM (24 h)');
const MINUTES_PER_WEEK = 7 * 24 * 60;

/** One weekly shift: from `start` on `weekday` (1 = Monday … 7 = Sunday, ISO 8601) for `durationMin` minutes, in the rotation's time zone. */
export const OncallShift = z
  .object({
    userId: z.number().int().positive(),
    weekday: z.number().int().min(1).max(7),
    start: HHMM,
    durationMin: z.number().int().min(15).max(MINUTES_PER_WEEK),
  })
  .strict();
export type OncallShift = z.infer<typeof OncallShift>;

/** Create or replace a rotation (PUT sends the whole rotation). */
export const RotationBody = z.object({ name: z.string().trim().min(1).max(120), timeZone: TimeZone, shifts: z.array(OncallShift).max(200) }).strict();
export type RotationBody = z.infer<typeof RotationBody>;

/** Somebody takes over the rotation from `startsAt` to `endsAt` (replaces the weekly shifts then). */
export const OverrideBody = z
  .object({ userId: z.number().int().positive(), startsAt: z.iso.datetime({ offset: true }), endsAt: z.iso.datetime({ offset: true }), note: z.string().trim().max(200).optional() })
  .strict()
  .refine((o) => Date.parse(o.startsAt) < Date.parse(o.endsAt), { message: '`startsAt` must be before `endsAt`', path: ['endsAt'] })
  .refine((o) => Date.parse(o.endsAt) - Date.parse(o.startsAt) <= 31 * 86_400_000, { message: 'At most 31 days per override', path: ['endsAt'] });
export type OverrideBody = z.infer<typeof OverrideBody>;

/** `?at=` of GET /oncall/now (default: now). */
export const OncallNowQuery = z.object({ at: z.iso.datetime({ offset: true }).optional() });

/** Who an escalation level notifies: the on-call technicians, every technician, or every administrator. */
export const ESCALATION_TARGETS = ['oncall', 'technicians', 'admins'] as const;
export type EscalationTarget = (typeof ESCALATION_TARGETS)[number];

/** Low-priority notices wait while quiet hours last (local time of `timeZone`; may wrap midnight). */
export const QuietHours = z.object({ start: HHMM, end: HHMM, timeZone: TimeZone }).strict();
export type QuietHours = z.infer<typeof QuietHours>;

/**
 * An escalation policy: level 0 is sent when the alarm is raised; each further level after
 * `escalateAfterMin` more minutes without acknowledgement. With `repeatHighest`, alarms of the
 * highest priority repeat the last level at the same interval until acknowledged.
 * `priorities` null (or left out): the default policy for priorities no other policy names.
 */
export const EscalationPolicyBody = z
  .object({
    name: z.string().trim().min(1).max(120),
    priorities: z.array(z.enum(ALARM_PRIORITIES)).min(1).max(ALARM_PRIORITIES.length).nullable().default(null),
    escalateAfterMin: z.number().int().min(1).max(24 * 60).default(15),
    levels: z.array(z.array(z.enum(ESCALATION_TARGETS)).min(1).max(ESCALATION_TARGETS.length)).min(1).max(6),
    repeatHighest: z.boolean().default(true),
    quietHours: QuietHours.nullable().default(null),
  })
  .strict();
export type EscalationPolicyBody = z.infer<typeof EscalationPolicyBody>;

export interface RotationDto extends RotationBody {
  id: number;
  overrides: OverrideDto[];
  updatedAt: string;
}

export interface OverrideDto {
  id: number;
  rotationId: number;
  userId: number;
  userName: string;
  startsAt: string;
  endsAt: string;
  note: string | null;
}

export interface EscalationPolicyDto {
  id: number;
  name: string;
  priorities: AlarmPriority[] | null;
  escalateAfterMin: number;
  levels: EscalationTarget[][];
  repeatHighest: boolean;
  quietHours: QuietHours | null;
  updatedAt: string;
}

export interface OncallNowDto {
  at: string;
  users: Array<{ id: number; name: string; email: string; rotationId: number; viaOverride: boolean }>;
}
