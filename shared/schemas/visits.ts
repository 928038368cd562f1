import { z } from 'zod';
import type { ChargingCheckResult } from '../records/chargingChecks';

/** Limits of a service visit and its attachments; the same numbers drive the client form. */
export const VISIT_LIMITS = {
  textChars: 4000,
  parts: 50,
  partNameChars: 120,
  alarms: 50,
  timeOnSiteMin: 24 * 60,
  /** Attachments per upload request. */
  filesPerUpload: 5,
  /** Attachments per visit. */
  filesPerVisit: 30,
} as const;

/** Content types accepted for attachments, detected from the bytes (never from the name or the declared type). */
export const ATTACHMENT_TYPES = ['image/jpeg', 'image/png', 'image/webp', 'application/pdf'] as const;
export type AttachmentType = (typeof ATTACHMENT_TYPES)[number];

/** A calendar date YYYY-MM-DD that exists. */
export const CalendarDate = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'Date: use YYYY-MM-DD')
  .refine((s) => !Number.isNaN(Date.parse(`${s}T00:00:00Z`)) && new Date(`${s}T00:00:00Z`).toISOString().startsWith(s), 'Date: no such day');

const text = (label: string) => z.string().trim().max(VISIT_LIMITS.textChars, `${label}: at most ${VISIT_LIMITS.textChars} characters`);
const finite = (label: string, min: number, max: number) => z.number({ error: `${label} must be a number` }).min(min, `${label}: at least ${min}`).max(max, `${label}: at most ${max}`);

export const VisitPart = z.object({
  name: z.string().trim().min(1, 'Part: enter a name').max(VISIT_LIMITS.partNameChars),
  qty: finite('Quantity', 0.01, 10_000),
});
export type VisitPart = z.infer<typeof VisitPart>;

/** Charging-check inputs: pressures kPa(g), temperatures °C, receiver level %; null = not measured. */
export const ChargingCheckBody = z
  .object({
    suctionKPaG: finite('Suction pressure', -101, 10_000).nullable().default(null),
    suctionLineC: finite('Suction-line temperature', -80, 80).nullable().default(null),
    liquidKPaG: finite('Liquid-line pressure', -101, 15_000).nullable().default(null),
    liquidLineC: finite('Liquid-line temperature', -60, 90).nullable().default(null),
    sightGlassClear: z.boolean().nullable().default(null),
    receiverLevelPercent: finite('Receiver level', 0, 100).nullable().default(null),
  })
  .strict();
export type ChargingCheckBody = z.infer<typeof ChargingCheckBody>;

const visitFields = {
  visitedOn: CalendarDate,
  /** The technician who did the work (default: the signed-in user). */
  technicianId: z.number().int().positive().optional(),
  findings: text('Findings').default(''),
  workDone: text('Work done').default(''),
  parts: z.array(VisitPart).max(VISIT_LIMITS.parts).default([]),
  timeOnSiteMin: z.number().int('Time on site: whole minutes').min(0).max(VISIT_LIMITS.timeOnSiteMin),
  alarmIds: z.array(z.number().int().positive()).max(VISIT_LIMITS.alarms).default([]),
  checks: ChargingCheckBody.nullable().default(null),
};

/** A new visit, on a box (its site follows) or on a whole site: exactly one of boxId and siteId. */
export const VisitCreateBody = z
  .object({ boxId: z.number().int().positive().optional(), siteId: z.number().int().positive().optional(), ...visitFields })
  .strict()
  .refine((b) => (b.boxId === undefined) !== (b.siteId === undefined), { message: 'Choose either a box or a site', path: ['boxId'] });
export type VisitCreateBody = z.infer<typeof VisitCreateBody>;

/** Changes to an open visit (the box or site stays). */
export const VisitUpdateBody = z
  .object({
    visitedOn: visitFields.visitedOn.optional(),
    technicianId: visitFields.technicianId,
    findings: text('Findings').optional(),
    workDone: text('Work done').optional(),
    parts: z.array(VisitPart).max(VISIT_LIMITS.parts).optional(),
    timeOnSiteMin: visitFields.timeOnSiteMin.optional(),
    alarmIds: z.array(z.number().int().positive()).max(VISIT_LIMITS.alarms).optional(),
    checks: ChargingCheckBody.nullable().optional(),
  })
  .strict();
export type VisitUpdateBody = z.infer<typeof VisitUpdateBody>;

/** Closing a visit; by default it acknowledges its linked alarms that wait for acknowledgement. */
export const VisitCloseBody = z.object({ acknowledgeAlarms: z.boolean().default(true) }).strict();
export type VisitCloseBody = z.infer<typeof VisitCloseBody>;

/** List filter of GET /visits. */
export const VisitListQuery = z.object({
  boxId: z.coerce.number().int().positive().optional(),
  siteId: z.coerce.number().int().positive().optional(),
  status: z.enum(['open', 'closed']).optional(),
});

export interface AttachmentDto {
  id: number;
  visitId: number;
  contentType: AttachmentType;
  sizeBytes: number;
  /** Sanitised download name. */
  fileName: string;
  hasThumb: boolean;
  url: string;
  thumbUrl: string | null;
  uploadedAt: string;
}

export interface VisitAlarmDto {
  id: number;
  ruleId: string;
  state: string;
  message: string;
  raisedAt: string;
}

export interface VisitChecksDto extends ChargingCheckBody, ChargingCheckResult {
  /** The refrigerant the values were computed for (the box's at the visit). */
  refrigerant: string;
  elevationM: number;
}

export interface VisitDto {
  id: number;
  customerId: number;
  siteId: number;
  siteName: string;
  boxId: number | null;
  boxName: string | null;
  visitedOn: string;
  technicianId: number;
  technicianName: string;
  findings: string;
  workDone: string;
  parts: VisitPart[];
  timeOnSiteMin: number;
  status: 'open' | 'closed';
  closedAt: string | null;
  alarms: VisitAlarmDto[];
  checks: VisitChecksDto | null;
  attachments: AttachmentDto[];
  createdAt: string;
  updatedAt: string;
}

/** What closing did to each linked alarm. */
export interface VisitCloseResult {
  visit: VisitDto;
  alarms: { alarmId: number; outcome: 'acknowledged' | 'not-waiting' | 'refused'; detail?: string }[];
}
