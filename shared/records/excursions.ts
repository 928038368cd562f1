/**
 * The food-safety temperature log's figures, as pure functions: excursions of box air above a limit
 * with their start, end and duration; the readings at the times the site's plan asks (every N
 * hours of local wall-clock time, the nearest reading within a tolerance); each local day's min and
 * max. Temperatures °C, times UTC ms. Works on raw readings and on rollup buckets alike.
 */
import type { BoxKind } from '../domain';
import { COOLER_HIGH_LIMIT_C, FREEZER_HIGH_LIMIT_C } from '../rules/defaults';
import { localDayBounds, localTimeToUtcMs } from './zonedTime';

/** One box-air figure: a raw reading (spanMs 0) or a rollup bucket starting at tsMs. */
export interface AirPoint {
  tsMs: number;
  /** The reading, or the bucket's mean, °C. */
  boxAirC: number;
  /** Lowest and highest value within the point, °C (both = boxAirC for a raw reading). */
  minC: number;
  maxC: number;
  /** Length of the bucket, ms (0 for a raw reading). */
  spanMs: number;
}

/** A time above the limit: from the first figure above to the first one back at or below. */
export interface Excursion {
  startMs: number;
  /** The first figure back at or below the limit; null when the data end while still above. */
  endMs: number | null;
  /** endMs − startMs; while open, up to the end of the last figure above (a lower bound), ms. */
  durationMs: number;
  /** Highest figure during the excursion, °C. */
  peakC: number;
  open: boolean;
  /** Longest gap between consecutive figures during the excursion, ms (a long one: the box may have been above unseen). */
  longestGapMs: number;
}

/** The reading chosen for one scheduled time of the plan. */
export interface ScheduledReading {
  /** Local wall-clock time of the plan, `HH:MM`. */
  label: string;
  atMs: number;
  /** The figure nearest atMs within the tolerance, or null (no reading then). */
  reading: { tsMs: number; boxAirC: number } | null;
}

/** One local day of the log. */
export interface DaySummary {
  day: string;
  startMs: number;
  endMs: number;
  scheduled: ScheduledReading[];
  /** Lowest and highest box air of the day, °C; null without data. */
  minC: number | null;
  maxC: number | null;
  /** Excursions overlapping the day (one crossing midnight appears on both days, with its full extent). */
  excursions: Excursion[];
  /** Figures the day had (readings or buckets). */
  points: number;
}

/** How far from a scheduled time a reading may be to stand for it, ms: 30 min, our choice. */
export const SCHEDULE_TOLERANCE_MS = 30 * 60_000;

/** Plan intervals a site may choose, h: divisors of 24, so each day repeats the same clock times. */
export const FOOD_LOG_INTERVALS_H = [1, 2, 3, 4, 6, 8, 12, 24] as const;
export type FoodLogIntervalH = (typeof FOOD_LOG_INTERVALS_H)[number];
/** Default plan interval, h: every 4 hours (as the records issue asks). */
export const DEFAULT_FOOD_LOG_INTERVAL_H: FoodLogIntervalH = 4;

/** Excursions above limitC (strictly above) in time-ordered figures. */
export function findExcursions(points: readonly AirPoint[], limitC: number): Excursion[] {
  const out: Excursion[] = [];
  let cur: Excursion | null = null;
  let prevTs = 0;
  let lastAbove: AirPoint | null = null;
  for (const p of points) {
    const above = p.maxC > limitC;
    if (cur) {
      cur.longestGapMs = Math.max(cur.longestGapMs, p.tsMs - prevTs);
      if (above) {
        cur.peakC = Math.max(cur.peakC, p.maxC);
        lastAbove = p;
      } else {
        cur.endMs = p.tsMs;
        cur.durationMs = p.tsMs - cur.startMs;
        cur.open = false;
        out.push(cur);
        cur = null;
      }
    } else if (above) {
      cur = { startMs: p.tsMs, endMs: null, durationMs: 0, peakC: p.maxC, open: true, longestGapMs: 0 };
      lastAbove = p;
    }
    prevTs = p.tsMs;
  }
  if (cur && lastAbove) {
    cur.durationMs = lastAbove.tsMs + lastAbove.spanMs - cur.startMs;
    out.push(cur);
  }
  return out;
}

const pad = (n: number) => String(n).padStart(2, '0');

/** The plan's times on a local day: 00:00, then every intervalH hours of wall-clock time; times a DST change skips are left out. */
export function scheduledTimes(day: string, timeZone: string, intervalH: number): Array<{ label: string; atMs: number }> {
  const out: Array<{ label: string; atMs: number }> = [];
  for (let h = 0; h < 24; h += intervalH) {
    const atMs = localTimeToUtcMs(day, h, 0, timeZone);
    if (atMs !== null) out.push({ label: `${pad(h)}:00`, atMs });
  }
  return out;
}

/** Index of the first point whose centre is at or after t (binary search on time-ordered points). */
function firstAtOrAfter(points: readonly AirPoint[], t: number): number {
  let lo = 0;
  let hi = points.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    const p = points[mid] as AirPoint;
    if (p.tsMs + p.spanMs / 2 < t) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** For each scheduled time, the figure whose time (a bucket's centre) is nearest, if within toleranceMs. */
export function pickScheduled(points: readonly AirPoint[], times: ReadonlyArray<{ label: string; atMs: number }>, toleranceMs = SCHEDULE_TOLERANCE_MS): ScheduledReading[] {
  return times.map(({ label, atMs }) => {
    const i = firstAtOrAfter(points, atMs);
    let best: AirPoint | null = null;
    let bestDist = Number.POSITIVE_INFINITY;
    for (const p of [points[i - 1], points[i]]) {
      if (!p) continue;
      const dist = Math.abs(p.tsMs + p.spanMs / 2 - atMs);
      if (dist < bestDist) {
        best = p;
        bestDist = dist;
      }
    }
    return { label, atMs, reading: best && bestDist <= toleranceMs ? { tsMs: best.tsMs, boxAirC: best.boxAirC } : null };
  });
}

/** The log's days: scheduled readings, min and max, and the excursions above limitC overlapping each day. */
export function summarizeDays(
  points: readonly AirPoint[],
  days: readonly string[],
  timeZone: string,
  intervalH: number,
  limitC: number,
  toleranceMs = SCHEDULE_TOLERANCE_MS,
): DaySummary[] {
  const excursions = findExcursions(points, limitC);
  return days.map((day) => {
    const { startMs, endMs } = localDayBounds(day, timeZone);
    let minC: number | null = null;
    let maxC: number | null = null;
    let n = 0;
    for (let i = firstAtOrAfter(points, startMs - 86_400_000); i < points.length; i++) {
      const p = points[i] as AirPoint;
      if (p.tsMs >= endMs) break;
      if (p.tsMs < startMs) continue;
      n++;
      minC = minC === null ? p.minC : Math.min(minC, p.minC);
      maxC = maxC === null ? p.maxC : Math.max(maxC, p.maxC);
    }
    const dayPoints = points.filter((p) => p.tsMs >= startMs - toleranceMs && p.tsMs < endMs + toleranceMs);
    return {
      day,
      startMs,
      endMs,
      scheduled: pickScheduled(dayPoints, scheduledTimes(day, timeZone, intervalH), toleranceMs),
      minC,
      maxC,
      excursions: excursions.filter((e) => e.startMs < endMs && (e.startMs >= startMs || e.startMs + e.durationMs > startMs)),
      points: n,
    };
  });
}

/** The limit a box's log is kept against, °C, with where it comes from in words. */
export interface FoodLogLimit {
  limitC: number;
  source: string;
}

/** Cold-holding limit of the FDA Food Code 2022, §3-501.16(A)(2): 41 °F (5 °C). */
export const FOOD_CODE_COLD_HOLDING_SOURCE = 'FDA Food Code 2022, §3-501.16(A)(2): cold holding at 5 °C (41 °F) or less';

/** The box's high limit as the log's limit, with its source (the box kind's default, or the box's own setting). */
export function foodLogLimit(kind: BoxKind, highLimitC: number): FoodLogLimit {
  const f = (c: number) => `${(Math.round((c * 9) / 5 * 10 + 320) / 10).toFixed(1)} °F`;
  const own = `${highLimitC.toFixed(1)} °C (${f(highLimitC)})`;
  if (kind === 'cooler') {
    if (highLimitC === COOLER_HIGH_LIMIT_C) return { limitC: highLimitC, source: `Box high limit ${own}, the cooler default: ${FOOD_CODE_COLD_HOLDING_SOURCE}.` };
    const note = highLimitC > COOLER_HIGH_LIMIT_C ? ' It is ABOVE' : ' It is below';
    return { limitC: highLimitC, source: `Box high limit ${own}, set for this box.${note} the cooler default, ${FOOD_CODE_COLD_HOLDING_SOURCE}.` };
  }
  const freezerDefault = `${FREEZER_HIGH_LIMIT_C.toFixed(1)} °C (${f(FREEZER_HIGH_LIMIT_C)})`;
  if (highLimitC === FREEZER_HIGH_LIMIT_C) return { limitC: highLimitC, source: `Box high limit ${own}, the freezer default: common practice (+5 to +10 °F); the Food Code sets no frozen-storage air limit.` };
  return { limitC: highLimitC, source: `Box high limit ${own}, set for this box (freezer default ${freezerDefault}, common practice).` };
}
