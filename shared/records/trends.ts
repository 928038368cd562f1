/**
 * Weekly trends as pure functions: ISO-week bounds in a site's time zone (167 or 169 h across a
 * daylight-saving change), hourly and daily figures and the week's summary from rollup buckets, the
 * superheat distribution, and findings where the data show a known signature. Temperatures °C,
 * differences K, times UTC ms, durations min unless the name says otherwise.
 */
import { SUPERHEAT_HIGH_BAND_K, SUPERHEAT_LOW_BAND_K, VALVE_NEAR_OPEN_PERCENT } from '../rules/defaults';
import type { SuperheatBinDto, TrendDayDto, TrendFindingDto, TrendHourDto, TrendSummaryDto } from '../schemas/trends';
import { addDays, localDayBounds, localDayOf, parseDay } from './zonedTime';

const MIN = 60_000;
const DAY = 86_400_000;

/** One rollup bucket as stored (readings_15m / readings_1h). */
export interface RollupBucket {
  startMs: number;
  samples: number;
  boxAirMinC: number;
  boxAirMaxC: number;
  boxAirSumC: number;
  superheatSumK: number;
  superheatN: number;
  valveSumPct: number;
  valveN: number;
  coveredMs: number;
  compressorMs: number;
  defrostMs: number;
  doorMs: number;
}

/** The box settings the figures are read against. */
export interface TrendBox {
  boxId: number;
  boxName: string;
  highLimitC: number;
  lowLimitC: number;
  superheatTargetK: number;
  defrostMaxMin: number;
  defrostType: string;
}

/** An alarm raised in the week. */
export interface AlarmFact {
  ruleId: string;
  raisedAtMs: number;
  acknowledgedAtMs: number | null;
}

/** A defrost period [startMs, endMs) from the raw readings. */
export interface DefrostPeriod {
  startMs: number;
  endMs: number;
}

/** A week in a zone: [startMs, endMs), its length in hours and its seven local days. */
export interface WeekBounds {
  week: string;
  startMs: number;
  endMs: number;
  hours: number;
  days: string[];
  timeZone: string;
}

const pad = (n: number, w = 2) => String(n).padStart(w, '0');

/** The ISO 8601 week (`YYYY-Www`) of a calendar day `YYYY-MM-DD`. */
export function isoWeekOfDay(day: string): string {
  const [y, m, d] = parseDay(day);
  const t = new Date(Date.UTC(y, m - 1, d));
  const dow = (t.getUTCDay() + 6) % 7; // Monday 0
  t.setUTCDate(t.getUTCDate() - dow + 3); // the week's Thursday decides its year
  const year = t.getUTCFullYear();
  const week = Math.ceil(((t.getTime() - Date.UTC(year, 0, 1)) / DAY + 1) / 7);
  return `${year}-W${pad(week)}`;
}

/** The Monday (`YYYY-MM-DD`) of an ISO week; throws on a malformed week or a week 53 the year lacks. */
export function mondayOfIsoWeek(week: string): string {
  const m = /^(\d{4})-W(\d{2})$/.exec(week);
  if (!m) throw new Error(`not an ISO week: ${week}`);
  const year = Number(m[1]);
  const w = Number(m[2]);
  const jan4 = new Date(Date.UTC(year, 0, 4));
  const week1Monday = Date.UTC(year, 0, 4) - ((jan4.getUTCDay() + 6) % 7) * DAY;
  const t = new Date(week1Monday + (w - 1) * 7 * DAY);
  const monday = `${t.getUTCFullYear()}-${pad(t.getUTCMonth() + 1)}-${pad(t.getUTCDate())}`;
  if (w < 1 || isoWeekOfDay(monday) !== week) throw new Error(`${year} has no ISO week ${w}`);
  return monday;
}

/** True when `week` is a well-formed ISO week that exists (week 53 only in long years). */
export function isValidIsoWeek(week: string): boolean {
  try {
    mondayOfIsoWeek(week);
    return true;
  } catch {
    return false;
  }
}

/** The bounds of an ISO week in a zone: Monday 00:00 to the next Monday 00:00, local time. */
export function weekBounds(week: string, timeZone: string): WeekBounds {
  const monday = mondayOfIsoWeek(week);
  const days = Array.from({ length: 7 }, (_, i) => addDays(monday, i));
  const startMs = localDayBounds(monday, timeZone).startMs;
  const endMs = localDayBounds(addDays(monday, 7), timeZone).startMs;
  return { week, startMs, endMs, hours: (endMs - startMs) / 3_600_000, days, timeZone };
}

/** The ISO week before `week`. */
export function previousIsoWeek(week: string): string {
  return isoWeekOfDay(addDays(mondayOfIsoWeek(week), -7));
}

/** The last full ISO week before the instant, in the zone (on a Monday, the week that just ended). */
export function lastFullIsoWeek(nowMs: number, timeZone: string): string {
  return previousIsoWeek(isoWeekOfDay(localDayOf(nowMs, timeZone)));
}

const mean = (b: RollupBucket) => b.boxAirSumC / b.samples;
const round = (x: number, digits = 1) => Math.round(x * 10 ** digits) / 10 ** digits;

/** Hourly chart points from 1 h buckets (box air mean/min/max °C, superheat mean K, valve mean %). */
export function hourlySeries(hourBuckets: readonly RollupBucket[]): TrendHourDto[] {
  return hourBuckets
    .filter((b) => b.samples > 0)
    .map((b) => ({
      ts: new Date(b.startMs).toISOString(),
      boxAirMeanC: round(mean(b), 2),
      boxAirMinC: b.boxAirMinC,
      boxAirMaxC: b.boxAirMaxC,
      superheatMeanK: b.superheatN > 0 ? round(b.superheatSumK / b.superheatN, 2) : null,
      valveMeanPercent: b.valveN > 0 ? round(b.valveSumPct / b.valveN, 1) : null,
    }));
}

interface Totals {
  coveredMs: number;
  inRangeMs: number;
  aboveMs: number;
  compressorMs: number;
  defrostMs: number;
  doorMs: number;
  airSum: number;
  samples: number;
  airMin: number | null;
  airMax: number | null;
}

/**
 * Sums of buckets. A bucket is in range when its mean box air is within [lowLimitC, highLimitC] and
 * above the limit when its mean is over highLimitC; it counts with the time its samples cover. So
 * these figures are as fine as the buckets (15 min), not as fine as the raw readings.
 */
function totalsOf(buckets: readonly RollupBucket[], box: Pick<TrendBox, 'highLimitC' | 'lowLimitC'>): Totals {
  const t: Totals = { coveredMs: 0, inRangeMs: 0, aboveMs: 0, compressorMs: 0, defrostMs: 0, doorMs: 0, airSum: 0, samples: 0, airMin: null, airMax: null };
  for (const b of buckets) {
    if (b.samples <= 0) continue;
    const m = mean(b);
    t.coveredMs += b.coveredMs;
    if (m >= box.lowLimitC && m <= box.highLimitC) t.inRangeMs += b.coveredMs;
    if (m > box.highLimitC) t.aboveMs += b.coveredMs;
    t.compressorMs += b.compressorMs;
    t.defrostMs += b.defrostMs;
    t.doorMs += b.doorMs;
    t.airSum += b.boxAirSumC;
    t.samples += b.samples;
    t.airMin = t.airMin === null ? b.boxAirMinC : Math.min(t.airMin, b.boxAirMinC);
    t.airMax = t.airMax === null ? b.boxAirMaxC : Math.max(t.airMax, b.boxAirMaxC);
  }
  return t;
}

const pct = (part: number, whole: number) => (whole > 0 ? round((100 * part) / whole) : null);

/** Per local day: covered time, compressor duty %, defrost count and mean length, door-open min, box air, time in range. */
export function dailyFigures(buckets: readonly RollupBucket[], defrosts: readonly DefrostPeriod[], bounds: WeekBounds, box: Pick<TrendBox, 'highLimitC' | 'lowLimitC'>): TrendDayDto[] {
  return bounds.days.map((day) => {
    const { startMs, endMs } = localDayBounds(day, bounds.timeZone);
    const t = totalsOf(
      buckets.filter((b) => b.startMs >= startMs && b.startMs < endMs),
      box,
    );
    const ds = defrosts.filter((d) => d.startMs >= startMs && d.startMs < endMs);
    return {
      day,
      coveredMin: round(t.coveredMs / MIN),
      compressorDutyPercent: pct(t.compressorMs, t.coveredMs),
      defrostCount: ds.length,
      defrostMeanMin: ds.length ? round(ds.reduce((s, d) => s + d.endMs - d.startMs, 0) / ds.length / MIN) : null,
      defrostMin: round(t.defrostMs / MIN),
      doorOpenMin: round(t.doorMs / MIN),
      boxAirMeanC: t.samples ? round(t.airSum / t.samples, 2) : null,
      boxAirMinC: t.airMin,
      boxAirMaxC: t.airMax,
      timeInRangePercent: pct(t.inRangeMs, t.coveredMs),
      minutesAboveLimit: round(t.aboveMs / MIN),
    };
  });
}

/** Width of a superheat bin, K, and the last bin's lower edge (everything above falls in it): our choice. */
export const SUPERHEAT_BIN_K = 1;
export const SUPERHEAT_BINS_TOP_K = 20;

/** Time per 1 K bin of the 15-min mean superheat (buckets with superheat samples only), min. */
export function superheatBins(buckets: readonly RollupBucket[]): SuperheatBinDto[] {
  const n = SUPERHEAT_BINS_TOP_K / SUPERHEAT_BIN_K + 1;
  const bins: SuperheatBinDto[] = Array.from({ length: n }, (_, i) => ({ fromK: i * SUPERHEAT_BIN_K, toK: i === n - 1 ? Number.POSITIVE_INFINITY : (i + 1) * SUPERHEAT_BIN_K, minutes: 0 }));
  for (const b of buckets) {
    if (b.superheatN <= 0) continue;
    const sh = b.superheatSumK / b.superheatN;
    const i = Math.min(n - 1, Math.max(0, Math.floor(sh / SUPERHEAT_BIN_K)));
    (bins[i] as SuperheatBinDto).minutes += b.coveredMs / MIN;
  }
  return bins.map((x) => ({ ...x, toK: Number.isFinite(x.toK) ? x.toK : 999, minutes: round(x.minutes) }));
}

/** The superheat band the findings and charts use: target − 1.5 K … target + 5 K (the rule bands, shared/rules/defaults). */
export function superheatBand(targetK: number): { lowK: number; highK: number } {
  return { lowK: round(targetK - SUPERHEAT_LOW_BAND_K, 2), highK: round(targetK + SUPERHEAT_HIGH_BAND_K, 2) };
}

/** The week's summary: time in range %, minutes above the high limit, duty, door, defrosts, alarms by rule, mean time to acknowledge (min). */
export function summarize(buckets: readonly RollupBucket[], defrosts: readonly DefrostPeriod[], alarms: readonly AlarmFact[], box: Pick<TrendBox, 'highLimitC' | 'lowLimitC'>): TrendSummaryDto {
  const t = totalsOf(buckets, box);
  return { ...summaryOfTotals(t, defrosts.length), ...excursionFigures(buckets, box.highLimitC), ...alarmFigures(alarms) };
}

/** Length of the buckets the summary reads, ms (readings_15m). */
export const SUMMARY_BUCKET_MS = 15 * MIN;

/**
 * Excursions from buckets: a run of buckets, each starting where the one before ended, whose mean
 * box air is above limitC. Duration = the run's covered time, min.
 */
export function excursionFigures(buckets: readonly RollupBucket[], limitC: number, bucketMs = SUMMARY_BUCKET_MS): Pick<TrendSummaryDto, 'excursionCount' | 'longestExcursionMin'> {
  let count = 0;
  let longest = 0;
  let runMs = 0;
  let lastStart: number | null = null;
  for (const b of buckets) {
    const above = b.samples > 0 && mean(b) > limitC;
    const joined = lastStart !== null && b.startMs === lastStart + bucketMs;
    if (above) {
      if (runMs > 0 && joined) runMs += b.coveredMs;
      else {
        count++;
        runMs = b.coveredMs;
      }
      longest = Math.max(longest, runMs);
    } else runMs = 0;
    lastStart = b.startMs;
  }
  return { excursionCount: count, longestExcursionMin: round(longest / MIN) };
}

function summaryOfTotals(t: Totals, defrostCount: number) {
  return {
    coveredMin: round(t.coveredMs / MIN),
    inRangeMin: round(t.inRangeMs / MIN),
    timeInRangePercent: pct(t.inRangeMs, t.coveredMs),
    minutesAboveLimit: round(t.aboveMs / MIN),
    compressorDutyPercent: pct(t.compressorMs, t.coveredMs),
    compressorMin: round(t.compressorMs / MIN),
    doorOpenMin: round(t.doorMs / MIN),
    defrostCount,
  };
}

/** Alarm counts by rule and the mean time from raise to acknowledgement of those acknowledged, min. */
export function alarmFigures(alarms: readonly AlarmFact[]): Pick<TrendSummaryDto, 'alarmCount' | 'alarmsByRule' | 'acknowledgedCount' | 'meanTimeToAckMin'> {
  const byRule: Record<string, number> = {};
  let ackN = 0;
  let ackSum = 0;
  for (const a of alarms) {
    byRule[a.ruleId] = (byRule[a.ruleId] ?? 0) + 1;
    if (a.acknowledgedAtMs !== null) {
      ackN++;
      ackSum += a.acknowledgedAtMs - a.raisedAtMs;
    }
  }
  return { alarmCount: alarms.length, alarmsByRule: byRule, acknowledgedCount: ackN, meanTimeToAckMin: ackN ? round(ackSum / ackN / MIN) : null };
}

/**
 * Several boxes' summaries as one: times add up, percentages are recomputed from the summed minutes
 * (not from the boxes' rounded percentages, which can move a site's figure by 0.1 point), alarms merge.
 */
export function combineSummaries(items: readonly TrendSummaryDto[], alarms: readonly AlarmFact[]): TrendSummaryDto {
  let covered = 0;
  let inRange = 0;
  let compressor = 0;
  let dutyCovered = 0;
  const out = { minutesAboveLimit: 0, doorOpenMin: 0, defrostCount: 0, excursionCount: 0, longestExcursionMin: 0 };
  for (const s of items) {
    covered += s.coveredMin;
    inRange += s.inRangeMin;
    if (s.compressorDutyPercent !== null) {
      compressor += s.compressorMin;
      dutyCovered += s.coveredMin;
    }
    out.minutesAboveLimit += s.minutesAboveLimit;
    out.doorOpenMin += s.doorOpenMin;
    out.defrostCount += s.defrostCount;
    out.excursionCount += s.excursionCount;
    out.longestExcursionMin = Math.max(out.longestExcursionMin, s.longestExcursionMin);
  }
  return {
    coveredMin: round(covered),
    inRangeMin: round(inRange),
    timeInRangePercent: pct(inRange, covered),
    minutesAboveLimit: round(out.minutesAboveLimit),
    compressorDutyPercent: pct(compressor, dutyCovered),
    compressorMin: round(compressor),
    doorOpenMin: round(out.doorOpenMin),
    defrostCount: out.defrostCount,
    excursionCount: out.excursionCount,
    longestExcursionMin: out.longestExcursionMin,
    ...alarmFigures(alarms),
  };
}

/** Hours of high superheat with the valve near open before the finding is raised, h: our choice. */
export const SUPERHEAT_VALVE_FINDING_MIN_HOURS = 3;
/** A defrost this close to the box's time limit counts as ended on time, min: our choice. */
export const DEFROST_ON_TIME_TOLERANCE_MIN = 1;
/** Defrosts in the week before "every cycle ends on time" means anything: our choice. */
export const DEFROST_ON_TIME_MIN_COUNT = 3;
/** Rise of compressor duty over the week before that raises a finding, percentage points: our choice. */
export const DUTY_RISE_POINTS = 15;
/** Door-open time above this multiple of the site's median box raises a finding: our choice. */
export const DOOR_SITE_MULTIPLE = 2;
/** ...and only above this much in the week, min (a few minutes against a median of one is noise): our choice. */
export const DOOR_FINDING_FLOOR_MIN = 60;

/** What the findings read. */
export interface FindingInput {
  box: TrendBox;
  /** Hourly superheat and valve sums (raw readings while the compressor ran, or 1 h rollups). */
  hourBuckets: readonly RollupBucket[];
  defrosts: readonly DefrostPeriod[];
  summary: TrendSummaryDto;
  previousSummary: TrendSummaryDto;
  /** Median weekly door-open time of the site's boxes, min (null when the site has one box). */
  siteDoorMedianMin: number | null;
}

/** The median of numbers (null for none). */
export function median(xs: readonly number[]): number | null {
  if (!xs.length) return null;
  const s = [...xs].sort((a, b) => a - b);
  const mid = s.length >> 1;
  return s.length % 2 ? (s[mid] as number) : ((s[mid - 1] as number) + (s[mid] as number)) / 2;
}

/** Findings where the week shows a known signature, each with the figures that raised it. */
export function findings(inp: FindingInput): TrendFindingDto[] {
  const { box } = inp;
  const out: TrendFindingDto[] = [];
  const who = { boxId: box.boxId, boxName: box.boxName };

  // High superheat with the valve near fully open: the valve cannot feed more (common practice).
  const highK = box.superheatTargetK + SUPERHEAT_HIGH_BAND_K;
  const hot = inp.hourBuckets.filter((b) => b.superheatN > 0 && b.valveN > 0 && b.superheatSumK / b.superheatN > highK && b.valveSumPct / b.valveN >= VALVE_NEAR_OPEN_PERCENT);
  if (hot.length >= SUPERHEAT_VALVE_FINDING_MIN_HOURS) {
    const sh = hot.reduce((s, b) => s + b.superheatSumK / b.superheatN, 0) / hot.length;
    const valve = hot.reduce((s, b) => s + b.valveSumPct / b.valveN, 0) / hot.length;
    out.push({
      ...who,
      id: 'superheat-high-valve-open',
      title: 'High superheat with the valve near fully open',
      text: `For ${hot.length} h with the compressor running, superheat averaged ${round(sh)} K (above ${round(highK)} K) while the valve stood at ${round(valve)} % on average. A valve that is open and still cannot feed the coil points to low charge or a restriction (filter-drier, liquid line): check the charge and the liquid line (common practice).`,
      figures: { hours: hot.length, superheatMeanK: round(sh, 2), superheatHighK: round(highK, 2), valveMeanPercent: round(valve), valveNearOpenPercent: VALVE_NEAR_OPEN_PERCENT },
    });
  }

  // Every defrost ending at the time limit: termination by temperature never happens (common practice).
  // Off-cycle defrost (coolers) often ends on time by design, so those boxes are left out.
  const limitMin = box.defrostMaxMin;
  if (box.defrostType !== 'off-cycle' && inp.defrosts.length >= DEFROST_ON_TIME_MIN_COUNT) {
    const lengths = inp.defrosts.map((d) => (d.endMs - d.startMs) / MIN);
    const onTime = lengths.filter((l) => l >= limitMin - DEFROST_ON_TIME_TOLERANCE_MIN).length;
    if (onTime === lengths.length) {
      out.push({
        ...who,
        id: 'defrost-on-time',
        title: 'Every defrost ended on its time limit',
        text: `All ${lengths.length} defrosts this week ran to the ${limitMin} min limit (shortest ${round(Math.min(...lengths))} min); none ended on temperature. Check the defrost heater and the termination sensor (common practice).`,
        figures: { defrosts: lengths.length, endedOnTime: onTime, defrostLimitMin: limitMin, shortestMin: round(Math.min(...lengths)) },
      });
    }
  }

  // Compressor duty rising week over week.
  const now = inp.summary.compressorDutyPercent;
  const before = inp.previousSummary.compressorDutyPercent;
  if (now !== null && before !== null && now - before > DUTY_RISE_POINTS) {
    out.push({
      ...who,
      id: 'duty-rising',
      title: 'Compressor duty rising',
      text: `The compressor ran ${now} % of the time this week against ${before} % the week before (+${round(now - before)} points; we flag more than ${DUTY_RISE_POINTS}). A rising load or a falling capacity: check the condenser, the evaporator coil and the door gaskets (common practice).`,
      figures: { dutyPercent: now, previousDutyPercent: before, risePoints: round(now - before), thresholdPoints: DUTY_RISE_POINTS },
    });
  }

  // Door open far more than the site's usual box.
  const door = inp.summary.doorOpenMin;
  const med = inp.siteDoorMedianMin;
  if (med !== null && door > DOOR_FINDING_FLOOR_MIN && door > DOOR_SITE_MULTIPLE * med) {
    out.push({
      ...who,
      id: 'door-open-high',
      title: 'Door open far more than the site’s usual',
      text: `The door was open ${round(door)} min this week, against a median of ${round(med)} min for the site's boxes (we flag more than ${DOOR_SITE_MULTIPLE}× and over ${DOOR_FINDING_FLOOR_MIN} min). Check the door closer, the gasket and how the box is used.`,
      figures: { doorOpenMin: round(door), siteMedianMin: round(med), multiple: DOOR_SITE_MULTIPLE },
    });
  }
  return out;
}
