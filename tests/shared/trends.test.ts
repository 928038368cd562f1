import { describe, expect, it } from 'vitest';
import {
  combineSummaries,
  dailyFigures,
  findings,
  isoWeekOfDay,
  isValidIsoWeek,
  lastFullIsoWeek,
  mondayOfIsoWeek,
  previousIsoWeek,
  summarize,
  superheatBins,
  weekBounds,
  type AlarmFact,
  type DefrostPeriod,
  type RollupBucket,
  type TrendBox,
} from '../../shared/records/trends';
import type { TrendSummaryDto } from '../../shared/schemas/trends';

const MIN = 60_000;
const Q = 15 * MIN;
const HOUR = 3_600_000;

/** A 15-min bucket of 90 samples (one every 10 s) covering the whole quarter-hour. */
function bucket(startMs: number, boxAirC: number, extra: Partial<RollupBucket> = {}): RollupBucket {
  return {
    startMs,
    samples: 90,
    boxAirMinC: boxAirC - 0.5,
    boxAirMaxC: boxAirC + 0.5,
    boxAirSumC: boxAirC * 90,
    superheatSumK: 4 * 90,
    superheatN: 90,
    valveSumPct: 50 * 90,
    valveN: 90,
    coveredMs: Q,
    compressorMs: 5 * MIN,
    defrostMs: 0,
    doorMs: 0,
    ...extra,
  };
}

// A cooler with the Food Code limit: 41 °F = 5 °C, FDA Food Code 3-501.16(A)(2); low limit 0 °C (common practice).
const box: TrendBox = { boxId: 1, boxName: 'Walk-in A', highLimitC: 5, lowLimitC: 0, superheatTargetK: 3.3, defrostMaxMin: 40, defrostType: 'electric' };

/**
 * The synthetic week 2026-W47 in UTC (Mon 2026-11-16 00:00 to Mon 2026-11-23 00:00): 7 × 96 = 672
 * quarter-hours at 2 °C, except Monday 10:00–11:00 (4 buckets at 7 °C, above the limit) and Tuesday
 * 03:00–03:30 (2 buckets at −1 °C, below the low limit); the compressor runs 5 of every 15 min; the
 * door is open 1 min in the 08:00 bucket of each day.
 */
function syntheticWeek(): { buckets: RollupBucket[]; start: number } {
  const start = Date.UTC(2026, 10, 16);
  const buckets: RollupBucket[] = [];
  for (let i = 0; i < 672; i++) {
    const t = start + i * Q;
    const dayIdx = Math.floor(i / 96);
    const hourOfDay = Math.floor((i % 96) / 4);
    let air = 2;
    if (dayIdx === 0 && hourOfDay === 10) air = 7;
    if (dayIdx === 1 && (i % 96 === 12 || i % 96 === 13)) air = -1;
    buckets.push(bucket(t, air, { doorMs: i % 96 === 32 ? MIN : 0 }));
  }
  return { buckets, start };
}

describe('the weekly summary of a known synthetic week', () => {
  const { buckets, start } = syntheticWeek();
  const alarms: AlarmFact[] = [
    { ruleId: 'box-air-high', raisedAtMs: start + 10.5 * HOUR, acknowledgedAtMs: start + 10.5 * HOUR + 20 * MIN },
    { ruleId: 'door-open', raisedAtMs: start + 2 * 24 * HOUR, acknowledgedAtMs: start + 2 * 24 * HOUR + 10 * MIN },
    { ruleId: 'box-air-high', raisedAtMs: start + 3 * 24 * HOUR, acknowledgedAtMs: null },
  ];
  const s = summarize(buckets, [], alarms, box);

  it('gives the time in range, minutes above the limit and excursions computed by hand', () => {
    // covered: 672 buckets × 15 min = 10,080 min
    expect(s.coveredMin).toBe(10_080);
    // out of range: 4 (above) + 2 (below) = 6 buckets; in range 666 / 672 = 99.107 % → 99.1 %
    expect(s.timeInRangePercent).toBe(99.1);
    // above the limit: 4 buckets × 15 min = 60 min, one run of consecutive buckets
    expect(s.minutesAboveLimit).toBe(60);
    expect(s.excursionCount).toBe(1);
    expect(s.longestExcursionMin).toBe(60);
  });

  it('gives the compressor duty and door-open time computed by hand', () => {
    // duty: 5 min of every 15 = 33.33 % → 33.3 %
    expect(s.compressorDutyPercent).toBe(33.3);
    // door: 1 min a day × 7 days = 7 min
    expect(s.doorOpenMin).toBe(7);
  });

  it('counts alarms by rule and the mean time to acknowledge of the acknowledged ones', () => {
    expect(s.alarmCount).toBe(3);
    expect(s.alarmsByRule).toEqual({ 'box-air-high': 2, 'door-open': 1 });
    expect(s.acknowledgedCount).toBe(2);
    // (20 min + 10 min) / 2 = 15 min; the unacknowledged alarm does not count
    expect(s.meanTimeToAckMin).toBe(15);
  });

  it('splits the week into seven local days with their own figures', () => {
    const days = dailyFigures(buckets, [{ startMs: start + 6 * HOUR, endMs: start + 6 * HOUR + 40 * MIN }], weekBounds('2026-W47', 'UTC'), box);
    expect(days.map((d) => d.day)).toEqual(['2026-11-16', '2026-11-17', '2026-11-18', '2026-11-19', '2026-11-20', '2026-11-21', '2026-11-22']);
    const mon = days[0];
    // Monday: 96 buckets, 4 above: 92 / 96 = 95.83 % → 95.8 %; 60 min above; one 40-min defrost
    expect(mon).toMatchObject({ coveredMin: 1440, timeInRangePercent: 95.8, minutesAboveLimit: 60, defrostCount: 1, defrostMeanMin: 40, doorOpenMin: 1, compressorDutyPercent: 33.3 });
    // Tuesday: 2 buckets below: 94 / 96 = 97.92 % → 97.9 %, nothing above
    expect(days[1]).toMatchObject({ timeInRangePercent: 97.9, minutesAboveLimit: 0, defrostCount: 0, defrostMeanMin: null });
    // Monday's mean box air: (92 × 2 + 4 × 7) / 96 = 212 / 96 = 2.2083 → 2.21 °C
    expect(mon?.boxAirMeanC).toBe(2.21);
  });

  it('puts each quarter-hour of superheat in its 1 K bin', () => {
    const bins = superheatBins(buckets);
    // every bucket has a 4 K mean: 672 × 15 min = 10,080 min in the 4–5 K bin
    expect(bins.find((b) => b.fromK === 4)?.minutes).toBe(10_080);
    expect(bins.filter((b) => b.fromK !== 4).every((b) => b.minutes === 0)).toBe(true);
  });
});

describe('a site week combined from its boxes', () => {
  // Two boxes of one site over the same UTC week: box A has one quarter-hour at 7 °C (above 5 °C),
  // box B none; the compressor runs 5 of 15 min on A and 10 of 15 min on B.
  const start = Date.UTC(2026, 10, 16);
  const week = (hot: number | null, compressorMin: number) => Array.from({ length: 672 }, (_, i) => bucket(start + i * Q, i === hot ? 7 : 2, { compressorMs: compressorMin * MIN }));
  const a = summarize(week(40, 5), [], [], box);
  const b = summarize(week(null, 10), [], [], box);
  const site = combineSummaries([a, b], []);

  it('weights time in range by the summed minutes, not by the rounded box percentages', () => {
    // box A alone: 671 / 672 = 99.851 % → 99.9 %; box B 100 %
    expect(a.timeInRangePercent).toBe(99.9);
    expect(b.timeInRangePercent).toBe(100);
    // site by hand: (671 + 672) / 1,344 quarter-hours = 99.926 % → 99.9 % (the mean of the rounded
    // box figures, (99.9 + 100) / 2 = 99.95, would round to 100 % with a box above the limit)
    expect(site.inRangeMin).toBe(20_145);
    expect(site.timeInRangePercent).toBe(99.9);
    expect(site.minutesAboveLimit).toBe(15);
    expect(site.coveredMin).toBe(20_160);
  });

  it('takes the site duty from the summed running minutes', () => {
    // by hand: (672 × 5 + 672 × 10) min / 20,160 min = 50 %
    expect(site.compressorMin).toBe(10_080);
    expect(site.compressorDutyPercent).toBe(50);
  });
});

describe('ISO week bounds in a site time zone', () => {
  const local = (ms: number, timeZone: string) =>
    new Intl.DateTimeFormat('en-GB', { timeZone, weekday: 'short', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(new Date(ms));

  it('gives Europe/Berlin 2026-W13, the week of the 2026-03-29 change to summer time, 167 hours', () => {
    const w = weekBounds('2026-W13', 'Europe/Berlin');
    expect(w.hours).toBe(167);
    // Checked with Intl: the week runs Monday 00:00 local to the next Monday 00:00 local.
    expect(local(w.startMs, 'Europe/Berlin')).toBe('Mon, 23/03/2026, 00:00');
    expect(local(w.endMs, 'Europe/Berlin')).toBe('Mon, 30/03/2026, 00:00');
    expect(w.days[6]).toBe('2026-03-29');
  });

  it('gives the week of the change back to winter time 169 hours and an ordinary week 168', () => {
    // EU summer time ends on the last Sunday of October: 2026-10-25 (Directive 2000/84/EC).
    expect(weekBounds('2026-W43', 'Europe/Berlin').hours).toBe(169);
    expect(weekBounds('2026-W47', 'Europe/Berlin').hours).toBe(168);
    // US DST starts on the second Sunday of March: 2026-03-08 (Energy Policy Act of 2005).
    expect(weekBounds('2026-W10', 'America/Chicago').hours).toBe(167);
  });

  it('cuts the short Sunday of the DST week into 23 local hours of buckets', () => {
    const w = weekBounds('2026-W13', 'Europe/Berlin');
    const buckets = Array.from({ length: 167 * 4 }, (_, i) => bucket(w.startMs + i * Q, 2));
    const days = dailyFigures(buckets, [], w, box);
    expect(days[6]).toMatchObject({ day: '2026-03-29', coveredMin: 23 * 60 });
    expect(days[0]).toMatchObject({ day: '2026-03-23', coveredMin: 24 * 60 });
  });

  it('names ISO weeks as ISO 8601 does across a year end', () => {
    // ISO 8601: week 1 holds the year's first Thursday; 2026-01-01 is a Thursday, 2027-01-03 a Sunday of 2026-W53.
    expect(isoWeekOfDay('2026-01-01')).toBe('2026-W01');
    expect(isoWeekOfDay('2025-12-29')).toBe('2026-W01');
    expect(isoWeekOfDay('2027-01-03')).toBe('2026-W53');
    expect(mondayOfIsoWeek('2026-W47')).toBe('2026-11-16');
    expect(previousIsoWeek('2026-W01')).toBe('2025-W52');
    expect(isValidIsoWeek('2026-W53')).toBe(true);
    expect(isValidIsoWeek('2025-W53')).toBe(false);
  });

  it('takes the last full week as the default, in the site zone', () => {
    // Monday 2026-11-23 06:30 UTC is 07:30 in Berlin: the week that just ended is W47.
    expect(lastFullIsoWeek(Date.UTC(2026, 10, 23, 6, 30), 'Europe/Berlin')).toBe('2026-W47');
    // The same instant is still Sunday evening in Chicago: its last full week is W46.
    expect(lastFullIsoWeek(Date.UTC(2026, 10, 23, 4, 30), 'America/Chicago')).toBe('2026-W46');
  });
});

describe('findings', () => {
  const baseSummary: TrendSummaryDto = {
    coveredMin: 10_080,
    inRangeMin: 9_979.2,
    timeInRangePercent: 99,
    minutesAboveLimit: 0,
    excursionCount: 0,
    longestExcursionMin: 0,
    compressorDutyPercent: 40,
    compressorMin: 4_032,
    doorOpenMin: 50,
    defrostCount: 28,
    alarmCount: 0,
    alarmsByRule: {},
    acknowledgedCount: 0,
    meanTimeToAckMin: null,
  };
  const start = Date.UTC(2026, 10, 16);
  const hours = (n: number, shK: number, valvePct: number) => Array.from({ length: n }, (_, i) => bucket(start + i * HOUR, 2, { superheatSumK: shK * 90, valveSumPct: valvePct * 90 }));
  const defrosts = (mins: number[]): DefrostPeriod[] => mins.map((m, i) => ({ startMs: start + i * 6 * HOUR, endMs: start + i * 6 * HOUR + m * MIN }));
  const healthy = { box, hourBuckets: hours(168, 4, 50), defrosts: defrosts([22, 25, 19, 24]), summary: baseSummary, previousSummary: baseSummary, siteDoorMedianMin: 50 };

  it('stays quiet on a healthy week', () => {
    expect(findings(healthy)).toEqual([]);
  });

  it('raises high superheat with the valve near open for 3 h or more, with its figures', () => {
    // 12 K is above target 3.3 + 5 K band (shared/rules/defaults, our choice); valve 95 % ≥ 90 % near open (common practice).
    const f = findings({ ...healthy, hourBuckets: [...hours(4, 12, 95), ...hours(10, 4, 50)] });
    expect(f).toHaveLength(1);
    expect(f[0]).toMatchObject({ id: 'superheat-high-valve-open', figures: { hours: 4, superheatMeanK: 12, valveMeanPercent: 95 } });
    expect(f[0]?.text).toMatch(/charge or a restriction/);
    // two hours are not enough (threshold 3 h, our choice)
    expect(findings({ ...healthy, hourBuckets: hours(2, 12, 95) })).toEqual([]);
    // high superheat with the valve half open is a different story (valve still has room)
    expect(findings({ ...healthy, hourBuckets: hours(6, 12, 50) })).toEqual([]);
  });

  it('raises when every defrost runs to its time limit, not when one ends on temperature', () => {
    const f = findings({ ...healthy, defrosts: defrosts([40, 40, 39.5, 40]) });
    expect(f.map((x) => x.id)).toEqual(['defrost-on-time']);
    expect(f[0]?.figures).toMatchObject({ defrosts: 4, endedOnTime: 4, defrostLimitMin: 40 });
    expect(f[0]?.text).toMatch(/heater and the termination sensor/);
    expect(findings({ ...healthy, defrosts: defrosts([40, 40, 25, 40]) })).toEqual([]);
    // Off-cycle defrost often ends on time by design (common practice): not a finding.
    expect(findings({ ...healthy, box: { ...box, defrostType: 'off-cycle' }, defrosts: defrosts([40, 40, 40, 40]) })).toEqual([]);
  });

  it('raises compressor duty rising by more than 15 points week over week (our threshold)', () => {
    const f = findings({ ...healthy, summary: { ...baseSummary, compressorDutyPercent: 58 }, previousSummary: { ...baseSummary, compressorDutyPercent: 40 } });
    expect(f.map((x) => x.id)).toEqual(['duty-rising']);
    expect(f[0]?.figures).toMatchObject({ dutyPercent: 58, previousDutyPercent: 40, risePoints: 18 });
    expect(findings({ ...healthy, summary: { ...baseSummary, compressorDutyPercent: 54 } })).toEqual([]);
  });

  it("raises door-open minutes above twice the site's median box", () => {
    const f = findings({ ...healthy, summary: { ...baseSummary, doorOpenMin: 240 }, siteDoorMedianMin: 50 });
    expect(f.map((x) => x.id)).toEqual(['door-open-high']);
    expect(f[0]?.figures).toMatchObject({ doorOpenMin: 240, siteMedianMin: 50, multiple: 2 });
    // 90 min is under 2 × 50 = 100 min
    expect(findings({ ...healthy, summary: { ...baseSummary, doorOpenMin: 90 }, siteDoorMedianMin: 50 })).toEqual([]);
  });
});
