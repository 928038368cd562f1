/** Cycle timers of one box (GET /api/v1/boxes/:id/cycles): compressor runs, defrosts and door openings. */
import { z } from 'zod';

/** Longest span for which the cycles answer carries shaded periods (ms): a week's chart and a margin. */
export const CYCLE_PERIODS_MAX_SPAN_MS = 8 * 86_400_000;

/** Optional `from`/`to` (both or neither): the span whose defrost and door-open periods the chart shades. */
export const CyclesQuery = z
  .object({
    from: z.iso.datetime({ offset: true }).optional(),
    to: z.iso.datetime({ offset: true }).optional(),
  })
  .refine((q) => (q.from === undefined) === (q.to === undefined), { message: 'Give both `from` and `to`, or neither', path: ['to'] })
  .refine((q) => q.from === undefined || q.to === undefined || Date.parse(q.from) < Date.parse(q.to), { message: '`from` must be before `to`', path: ['from'] })
  .refine((q) => q.from === undefined || q.to === undefined || Date.parse(q.to) - Date.parse(q.from) <= CYCLE_PERIODS_MAX_SPAN_MS, {
    message: 'Periods cover at most 8 days; use the readings rollups beyond',
    path: ['to'],
  });
export type CyclesQuery = z.infer<typeof CyclesQuery>;

/** A period [start, end) as ISO times. */
export type PeriodIso = [string, string];

export interface BoxCyclesDto {
  boxId: number;
  /** Server time the figures were computed at (ISO). */
  asOf: string;
  /** Start of the readings examined (ISO): a state older than this reads "before" it. */
  windowFrom: string;
  lastReadingAt: string | null;
  /** True when the last reading is recent enough to tell the state now. */
  current: boolean;
  /** The site's IANA time zone: "today" is the site-local day. */
  timeZone: string;
  compressor: {
    on: boolean | null;
    /** Start of the current run (or off period); windowFrom when it began before the window. */
    sinceAt: string | null;
    sinceBeforeWindow: boolean;
    /** Off → on changes in the hour before asOf. */
    startsLastHour: number;
    /** Times of those starts (ISO), oldest first, so a client can let them age out. */
    startsAt: string[];
  };
  defrost: {
    on: boolean | null;
    lastStartAt: string | null;
    lastEndAt: string | null;
    /** Length of the last completed defrost (min), null when none was seen whole. */
    lastDurationMin: number | null;
    /** The box's defrost interval setting (h), counted from the start of the last defrost. */
    intervalH: number;
    /** Last start + interval; null when no defrost start was seen (then nothing is scheduled to time it from). */
    nextDueAt: string | null;
  };
  door: {
    open: boolean | null;
    sinceAt: string | null;
    sinceBeforeWindow: boolean;
    /** Minutes the door stood open since site-local midnight, counted until `countedUntil`. */
    openTodayMin: number;
    openingsToday: number;
    countedUntil: string;
    dayStartAt: string;
    dayEndAt: string;
  };
  /** Defrost and door-open periods within from/to, when the query asked for a span. */
  periods?: { from: string; to: string; defrost: PeriodIso[]; door: PeriodIso[] };
}
