/** Alarm API shapes: list query, actions, DTOs. Shared by server and client. */
import { z } from 'zod';
import { ALARM_PRIORITIES, ALARM_RULES, ALARM_STATES, type AlarmAction, type AlarmPriority, type AlarmRuleId, type AlarmState } from '../alarms/types';
import { PageQuery } from './common';

const csvOf = <T extends readonly [string, ...string[]]>(values: T) =>
  z
    .string()
    .transform((s) => s.split(',').map((x) => x.trim()).filter(Boolean))
    .pipe(z.array(z.enum(values)).max(values.length));

export const AlarmListQuery = PageQuery.extend({
  state: csvOf(ALARM_STATES).optional(),
  priority: csvOf(ALARM_PRIORITIES).optional(),
  rule: csvOf(ALARM_RULES).optional(),
  siteId: z.coerce.number().int().positive().optional(),
  boxId: z.coerce.number().int().positive().optional(),
  /** true: only alarms not in `normal` (active or waiting for acknowledgement). */
  active: z.enum(['true', 'false']).transform((v) => v === 'true').optional(),
  from: z.iso.datetime({ offset: true }).optional(),
  to: z.iso.datetime({ offset: true }).optional(),
});
export type AlarmListQuery = z.infer<typeof AlarmListQuery>;

export const AlarmAckBody = z.object({ note: z.string().trim().max(500).optional() }).strict();
export type AlarmAckBody = z.infer<typeof AlarmAckBody>;

/** Shelving is time-limited (ISA-18.2) and needs a reason. */
export const AlarmShelveBody = z.object({ minutes: z.number().int().min(5).max(24 * 60), reason: z.string().trim().min(3).max(200) }).strict();
export type AlarmShelveBody = z.infer<typeof AlarmShelveBody>;

export const AlarmNoteBody = z.object({ note: z.string().trim().max(500).optional() }).strict();

/** The token of an e-mailed acknowledgement link (`/alarms/:id?ack=TOKEN`), sent back by the signed-in user. */
export const AlarmAckLinkBody = z.object({ token: z.string().regex(/^[A-Za-z0-9_-]{20,128}$/, 'Not an acknowledgement link token') }).strict();
export type AlarmAckLinkBody = z.infer<typeof AlarmAckLinkBody>;

/** A box's maintenance window as the API answers it. */
export interface MaintenanceDto {
  boxId: number;
  until: string;
  note: string | null;
}

/** A technician on site puts a box in maintenance: nothing is raised until it ends. */
export const MaintenanceBody = z.object({ minutes: z.number().int().min(15).max(12 * 60), note: z.string().trim().max(200).optional() }).strict();
export type MaintenanceBody = z.infer<typeof MaintenanceBody>;

export interface AlarmDto {
  id: number;
  boxId: number;
  boxName: string;
  siteId: number;
  siteName: string;
  customerId: number;
  ruleId: AlarmRuleId;
  priority: AlarmPriority;
  state: AlarmState;
  /** Whether the rule's condition is true now (an alarm can be acknowledged and still active). */
  conditionActive: boolean;
  value: number | null;
  message: string;
  raisedAt: string;
  clearedAt: string | null;
  acknowledgedAt: string | null;
  acknowledgedBy: { id: number; name: string } | null;
  shelvedUntil: string | null;
  /** Times the same condition came back within the re-open window and re-opened this alarm. */
  reopenCount: number;
  updatedAt: string;
}

export interface AlarmTransitionDto {
  id: number;
  at: string;
  action: AlarmAction;
  fromState: AlarmState;
  toState: AlarmState;
  userId: number | null;
  userName: string | null;
  note: string | null;
}

export interface AlarmNotificationDto {
  id: number;
  at: string;
  channel: 'email' | 'push';
  recipient: string;
  status: 'sent' | 'failed';
  error: string | null;
  /** Escalation level that sent it (0 = first notice). */
  level: number;
}

export interface AlarmDetailDto extends AlarmDto {
  transitions: AlarmTransitionDto[];
  notifications: AlarmNotificationDto[];
}
