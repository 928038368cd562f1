/** Alarm API: list, detail, acknowledge, shelve, the e-mailed acknowledgement link and box maintenance. */
import { z } from 'zod';
import type { Page } from '@shared/schemas/common';
import { ALARM_PRIORITIES, ALARM_RULES, ALARM_STATES, type AlarmPriority, type AlarmRuleId, type AlarmState } from '@shared/alarms/types';
import type { AlarmAckBody, AlarmDetailDto, AlarmDto, AlarmShelveBody, MaintenanceBody, MaintenanceDto } from '@shared/schemas/alarms';
import { ApiError, http } from './http';

/** The acknowledgement link was already used or has expired (HTTP 410). */
export class AckLinkGoneError extends ApiError {
  readonly reason: 'used' | 'expired';
  constructor(e: ApiError) {
    super({ status: e.status, type: e.type, title: e.title, detail: e.detail, requestId: e.requestId });
    this.name = 'AckLinkGoneError';
    this.reason = /expired/.test(e.type) ? 'expired' : 'used';
  }
}

/** The alarm is in a state that does not take this action (HTTP 409), e.g. already acknowledged. */
export class AlarmStateConflictError extends ApiError {
  constructor(e: ApiError) {
    super({ status: e.status, type: e.type, title: e.title, detail: e.detail, requestId: e.requestId });
    this.name = 'AlarmStateConflictError';
  }
}

/** Maps an alarm problem to its typed error; anything else passes through unchanged. */
export function toAlarmError(e: unknown): unknown {
  if (!(e instanceof ApiError)) return e;
  if (e.status === 410) return new AckLinkGoneError(e);
  if (e.status === 409) return new AlarmStateConflictError(e);
  return e;
}

async function mapped<T>(p: Promise<T>): Promise<T> {
  try {
    return await p;
  } catch (e) {
    throw toAlarmError(e);
  }
}

export interface AlarmListFilter {
  state?: readonly AlarmState[];
  priority?: readonly AlarmPriority[];
  rule?: readonly AlarmRuleId[];
  siteId?: number | null;
  boxId?: number | null;
  active?: boolean;
  from?: string | null;
  to?: string | null;
  q?: string;
  page?: number;
  pageSize?: number;
}

const csv = (v: readonly string[] | undefined) => (v && v.length > 0 ? v.join(',') : undefined);

/** The query string parts the server's AlarmListQuery expects (comma lists, `active=true|false`). */
export function alarmListQuery(f: AlarmListFilter) {
  return {
    state: csv(f.state),
    priority: csv(f.priority),
    rule: csv(f.rule),
    siteId: f.siteId ?? undefined,
    boxId: f.boxId ?? undefined,
    active: f.active === undefined ? undefined : String(f.active),
    from: f.from ?? undefined,
    to: f.to ?? undefined,
    q: f.q || undefined,
    page: f.page,
    pageSize: f.pageSize,
  };
}

export const alarmsApi = {
  list: (f: AlarmListFilter = {}, signal?: AbortSignal) => http.get<Page<AlarmDto>>('/alarms', alarmListQuery(f), signal),
  get: (id: number) => http.get<AlarmDetailDto>(`/alarms/${id}`),
  ack: (id: number, body: AlarmAckBody = {}) => mapped(http.post<AlarmDto>(`/alarms/${id}/ack`, body)),
  shelve: (id: number, body: AlarmShelveBody) => mapped(http.post<AlarmDto>(`/alarms/${id}/shelve`, body)),
  unshelve: (id: number) => mapped(http.post<AlarmDto>(`/alarms/${id}/unshelve`, {})),
  /** Acknowledges through the single-use token of an e-mailed link; 410 → AckLinkGoneError. */
  ackLink: (token: string) => mapped(http.post<AlarmDto>('/alarms/ack-link', { token })),
};

export const maintenanceApi = {
  start: (boxId: number, body: MaintenanceBody) => http.post<MaintenanceDto>(`/boxes/${boxId}/maintenance`, body),
  end: (boxId: number) => http.del(`/boxes/${boxId}/maintenance`),
};

const iso = z.string().min(1).refine((s) => !Number.isNaN(Date.parse(s)), 'not a time');
const isoOrNull = iso.nullable();

/**
 * Guard for the `alarm` member of a live frame (`{ type: 'alarm', alarm }`); the app-wide frame
 * guard (src/composables/liveFrame.ts) can use it so bad alarm frames are dropped, not applied.
 */
export const LiveAlarmFrame = z.object({
  type: z.literal('alarm'),
  alarm: z.object({
    id: z.number().int().positive(),
    boxId: z.number().int().positive(),
    boxName: z.string(),
    siteId: z.number().int().positive(),
    siteName: z.string(),
    customerId: z.number().int().positive(),
    ruleId: z.enum(ALARM_RULES),
    priority: z.enum(ALARM_PRIORITIES),
    state: z.enum(ALARM_STATES),
    conditionActive: z.boolean(),
    value: z.number().finite().nullable(),
    message: z.string(),
    raisedAt: iso,
    clearedAt: isoOrNull,
    acknowledgedAt: isoOrNull,
    acknowledgedBy: z.object({ id: z.number().int(), name: z.string() }).nullable(),
    shelvedUntil: isoOrNull,
    reopenCount: z.number().int().nonnegative(),
    updatedAt: iso,
  }),
});
