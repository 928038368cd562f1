/** Food-safety temperature log API shapes: period query, entries, sign-off, site plan, DTOs. Shared by server and client. */
import { z } from 'zod';
import { FOOD_LOG_INTERVALS_H } from '../records/excursions';
import { addDays, parseDay } from '../records/zonedTime';

/** Longest period one log answer or export covers, days. */
export const FOOD_LOG_MAX_DAYS = 31;
/** Longest period one sign-off covers, days (a week). */
export const FOOD_LOG_MAX_SIGN_OFF_DAYS = 7;

export const FOOD_LOG_ENTRY_KINDS = ['corrective-action', 'note', 'sign-off', 'correction'] as const;
export type FoodLogEntryKind = (typeof FOOD_LOG_ENTRY_KINDS)[number];

const Day = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a YYYY-MM-DD day')
  .refine((d) => {
    const [y, m, dd] = parseDay(d);
    const t = new Date(Date.UTC(y, m - 1, dd));
    return t.getUTCFullYear() === y && t.getUTCMonth() === m - 1 && t.getUTCDate() === dd && y >= 2000 && y <= 2100;
  }, 'No such calendar day');

const spanDays = (from: string, to: string) => Math.round((Date.parse(`${to}T00:00:00Z`) - Date.parse(`${from}T00:00:00Z`)) / 86_400_000) + 1;

/** Refinements of a period of whole site-local days, both included, at most maxDays long. */
const periodChecks = <T extends { from: string; to: string }>(schema: z.ZodType<T>, maxDays: number) =>
  schema
    .refine((p) => p.from <= p.to, { message: '"to" must not be before "from"', path: ['to'] })
    .refine((p) => p.from > p.to || spanDays(p.from, p.to) <= maxDays, { message: `At most ${maxDays} days`, path: ['to'] });

/** `?from=YYYY-MM-DD&to=YYYY-MM-DD`, at most 31 site-local days. */
export const FoodLogQuery = periodChecks(z.object({ from: Day, to: Day }), FOOD_LOG_MAX_DAYS);
export type FoodLogQuery = z.infer<typeof FoodLogQuery>;

/** A new entry: a corrective action or note on a day, or a correction of an earlier entry (its day is the corrected entry's). */
export const FoodLogEntryBody = z.discriminatedUnion('kind', [
  z
    .object({
      kind: z.literal('corrective-action'),
      day: Day,
      /** What was done with the product (and the box). */
      text: z.string().trim().min(3).max(2000),
      /** When it was done (ISO with offset); defaults to now. */
      at: z.iso.datetime({ offset: true }).optional(),
      /** Product temperature measured with a probe thermometer, °C. */
      productProbeC: z.number().min(-60).max(100).optional(),
      /** Start of the excursion the action answers (ISO), if any. */
      excursionStartAt: z.iso.datetime({ offset: true }).optional(),
    })
    .strict(),
  z.object({ kind: z.literal('note'), day: Day, text: z.string().trim().min(1).max(2000), at: z.iso.datetime({ offset: true }).optional() }).strict(),
  z.object({ kind: z.literal('correction'), refersToId: z.number().int().positive(), text: z.string().trim().min(3).max(2000) }).strict(),
]);
export type FoodLogEntryBody = z.infer<typeof FoodLogEntryBody>;

/** Changing an entry of a day not yet signed (refused with 409 once signed). */
export const FoodLogEntryPatch = z
  .object({ text: z.string().trim().min(1).max(2000).optional(), at: z.iso.datetime({ offset: true }).optional(), productProbeC: z.number().min(-60).max(100).nullable().optional() })
  .strict()
  .refine((b) => Object.keys(b).length > 0, 'Send at least one field');
export type FoodLogEntryPatch = z.infer<typeof FoodLogEntryPatch>;

/** A daily (from = to) or weekly sign-off of a box's log. */
export const FoodLogSignOffBody = periodChecks(z.strictObject({ from: Day, to: Day, text: z.string().trim().max(500).optional() }), FOOD_LOG_MAX_SIGN_OFF_DAYS);
export type FoodLogSignOffBody = z.infer<typeof FoodLogSignOffBody>;

/** A site's plan: readings every foodLogIntervalH hours of local time. */
export const FoodLogSiteSettingsBody = z
  .object({
    foodLogIntervalH: z.literal(FOOD_LOG_INTERVALS_H, { error: 'Use 1, 2, 3, 4, 6, 8, 12 or 24 (hours that divide a day)' }),
  })
  .strict();
export type FoodLogSiteSettingsBody = z.infer<typeof FoodLogSiteSettingsBody>;

/** One entry as the API answers it. */
export interface FoodLogEntryDto {
  id: number;
  boxId: number;
  day: string;
  kind: FoodLogEntryKind;
  text: string;
  byUserId: number | null;
  byName: string;
  /** When the action was taken (ISO UTC). */
  at: string;
  /** When it was recorded (ISO UTC). */
  recordedAt: string;
  refersToId: number | null;
  productProbeC: number | null;
  excursionStartAt: string | null;
  /** Ids of the corrections that reference this entry. */
  correctedBy: number[];
  /** Recorded after the day was signed. */
  afterSignOff: boolean;
}

export interface FoodLogExcursionDto {
  start: string;
  end: string | null;
  durationMin: number;
  peakC: number;
  open: boolean;
  longestGapMin: number;
}

/** Where a day's figures come from: raw readings, 1-minute rollups (raw already dropped), or none. */
export type FoodLogSource = 'raw' | 'rollup-1m' | 'none';

export interface FoodLogDayDto {
  day: string;
  source: FoodLogSource;
  /** Raw readings left out because their box-air sensor was flagged (failed, implausible or stuck). */
  doubtedReadings: number;
  scheduled: Array<{ label: string; at: string; readingAt: string | null; boxAirC: number | null }>;
  minC: number | null;
  maxC: number | null;
  excursions: FoodLogExcursionDto[];
  entries: FoodLogEntryDto[];
  signedOff: { entryId: number; byName: string; at: string } | null;
}

/** GET /food-log/boxes/:boxId answer. */
export interface FoodLogDto {
  box: { id: number; name: string; kind: 'cooler' | 'freezer' };
  site: { id: number; name: string; timeZone: string };
  customer: { id: number; name: string };
  from: string;
  to: string;
  limitC: number;
  limitSource: string;
  intervalH: number;
  toleranceMin: number;
  /** The food-safety caution (box air is not product temperature; the local health authority decides). */
  statement: string;
  sourceNote: string;
  days: FoodLogDayDto[];
}

/** The last day of a week starting on `from` (7 days). */
export const weekEnd = (from: string) => addDays(from, 6);
