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

/** Unit of a rule's threshold: °C (limits), K (superheat), minutes, or a count (defrosts, starts per hour, failures, missed intervals). */
export type RuleThresholdUnit = 'C' | 'K' | 'min' | 'count';

/** What a per-box override may set a rule's threshold to; null: the rule has no threshold of its own (door-open). */
export interface RuleThresholdRange {
  unit: RuleThresholdUnit;
  min: number;
  max: number;
  integer: boolean;
}

/**
 * Override ranges of each rule's threshold. Box-air limits use the box limits (BOX_LIMITS.limitC,
 * −50…25 °C); superheat 0.5–30 K covers every EEV target band with room; the counts and times
 * are bounded so the rule can still fire inside its window (our choice).
 */
export const RULE_THRESHOLDS: Record<AlarmRuleId, RuleThresholdRange | null> = {
  'box-air-high': { unit: 'C', min: -50, max: 25, integer: false },
  'box-air-low': { unit: 'C', min: -50, max: 25, integer: false },
  'superheat-low': { unit: 'K', min: 0.5, max: 30, integer: false },
  'superheat-high': { unit: 'K', min: 0.5, max: 30, integer: false },
  'defrost-overtime': { unit: 'min', min: 5, max: 240, integer: false },
  'defrost-timed-termination': { unit: 'count', min: 1, max: 20, integer: true },
  'door-open': null,
  'short-cycling': { unit: 'count', min: 2, max: 60, integer: true },
  'long-run': { unit: 'min', min: 30, max: 1440, integer: false },
  'pump-down-failure': { unit: 'count', min: 0, max: 20, integer: true },
  'sensor-fault': { unit: 'min', min: 10, max: 1440, integer: false },
  'controller-offline': { unit: 'count', min: 2, max: 60, integer: true },
};

/** Longest delay or clear delay of an override, min (one day). */
export const RULE_OVERRIDE_MAX_DELAY_MIN = 1440;
/** Largest deadband of an override, in the threshold's unit (K for temperatures). */
export const RULE_OVERRIDE_MAX_DEADBAND = 10;

const minutes = (label: string) =>
  z.number({ error: `${label} must be a number of minutes` }).min(0, `${label}: at least 0 min`).max(RULE_OVERRIDE_MAX_DELAY_MIN, `${label}: at most ${RULE_OVERRIDE_MAX_DELAY_MIN} min (one day)`);

/** PUT /api/v1/boxes/:id/alarm-rules/:ruleId: the box's whole override of one rule; a field left out keeps the default. */
export const RuleOverrideBody = z
  .object({
    enabled: z.boolean().optional(),
    threshold: z.number({ error: 'Threshold must be a number' }).finite().optional(),
    delayMin: minutes('Delay').optional(),
    clearDelayMin: minutes('Clear delay').optional(),
    deadband: z.number({ error: 'Deadband must be a number' }).min(0, 'Deadband: at least 0').max(RULE_OVERRIDE_MAX_DEADBAND, `Deadband: at most ${RULE_OVERRIDE_MAX_DEADBAND}`).optional(),
    priority: z.enum(ALARM_PRIORITIES).optional(),
  })
  .strict()
  .refine((b) => Object.values(b).some((v) => v !== undefined), { message: 'Set at least one field, or DELETE the override to return to the defaults' });
export type RuleOverrideBody = z.infer<typeof RuleOverrideBody>;

/** The override body for one rule: RuleOverrideBody plus the rule's own threshold range. */
export function ruleOverrideBodyFor(ruleId: AlarmRuleId) {
  const range = RULE_THRESHOLDS[ruleId];
  return RuleOverrideBody.superRefine((b, ctx) => {
    if (b.threshold === undefined) return;
    if (range === null) ctx.addIssue({ code: 'custom', path: ['threshold'], message: `${ruleId} has no threshold to override (change its delay instead)` });
    else if (b.threshold < range.min || b.threshold > range.max) ctx.addIssue({ code: 'custom', path: ['threshold'], message: `Threshold of ${ruleId}: ${range.min} to ${range.max} (${range.unit})` });
    else if (range.integer && !Number.isInteger(b.threshold)) ctx.addIssue({ code: 'custom', path: ['threshold'], message: `Threshold of ${ruleId} is a whole count` });
  });
}

/** A rule's values as the engine applies them (threshold in the rule's unit, times in minutes). */
export interface RuleValuesDto {
  enabled: boolean;
  threshold: number;
  delayMin: number;
  clearDelayMin: number;
  deadband: number;
  priority: AlarmPriority;
}

/** One rule of a box: its default (kind and box settings) with the source, the box's override and the effective value. */
export interface BoxAlarmRuleDto {
  ruleId: AlarmRuleId;
  threshold: RuleThresholdRange | null;
  default: RuleValuesDto;
  defaultSource: string;
  override: RuleOverrideBody | null;
  overrideUpdatedAt: string | null;
  overrideUpdatedBy: { id: number; name: string } | null;
  effective: RuleValuesDto;
}

/** GET /api/v1/boxes/:id/alarm-rules. */
export interface BoxAlarmRulesDto {
  boxId: number;
  rules: BoxAlarmRuleDto[];
}
