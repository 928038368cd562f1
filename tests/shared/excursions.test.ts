import { describe, expect, it } from 'vitest';
import { findExcursions, foodLogLimit, pickScheduled, scheduledTimes, summarizeDays, type AirPoint } from '../../shared/records/excursions';
import { localDayBounds, localDayOf, localTimeToUtcMs } from '../../shared/records/zonedTime';
import { FoodLogQuery } from '../../shared/schemas/foodLog';

const raw = (tsMs: number, boxAirC: number): AirPoint => ({ tsMs, boxAirC, minC: boxAirC, maxC: boxAirC, spanMs: 0 });
const H = 3_600_000;
const MIN = 60_000;

/** Readings every 10 s from startMs for durationMs, at boxAirC(t). */
function trace(startMs: number, durationMs: number, boxAirC: (t: number) => number): AirPoint[] {
  const out: AirPoint[] = [];
  for (let t = startMs; t < startMs + durationMs; t += 10_000) out.push(raw(t, boxAirC(t)));
  return out;
}

// Cooler limit 5 °C (41 °F): FDA Food Code 2022 §3-501.16(A)(2).
const COOLER_LIMIT_C = 5;

describe('excursions above the limit', () => {
  it('an excursion of 3 h 17 min 30 s above 5 °C appears once with exactly that duration', () => {
    const t0 = Date.parse('2026-06-10T12:00:00Z');
    const up = t0 + 2 * H;
    const down = up + 3 * H + 17 * MIN + 30_000;
    const points = trace(t0, 8 * H, (t) => (t >= up && t < down ? 7.5 : 3));
    const ex = findExcursions(points, COOLER_LIMIT_C);
    expect(ex).toHaveLength(1);
    expect(ex[0]?.startMs).toBe(up);
    expect(ex[0]?.endMs).toBe(down);
    expect(ex[0]?.durationMs).toBe(3 * H + 17 * MIN + 30_000);
    expect(ex[0]?.peakC).toBe(7.5);
    expect(ex[0]?.open).toBe(false);
  });

  it('a reading exactly at the limit is not an excursion (the code says 5 °C or less)', () => {
    const t0 = Date.parse('2026-06-10T12:00:00Z');
    expect(findExcursions(trace(t0, H, () => COOLER_LIMIT_C), COOLER_LIMIT_C)).toEqual([]);
  });

  it('an excursion still running when the data end is open, with its duration up to the last reading', () => {
    const t0 = Date.parse('2026-06-10T12:00:00Z');
    const points = trace(t0, 2 * H, (t) => (t >= t0 + H ? 9 : 2));
    const ex = findExcursions(points, COOLER_LIMIT_C);
    expect(ex).toHaveLength(1);
    expect(ex[0]?.open).toBe(true);
    expect(ex[0]?.endMs).toBeNull();
    expect(ex[0]?.durationMs).toBe(H - 10_000);
  });

  it('from 1-minute rollup buckets, an excursion runs from the first bucket whose max is above to the first bucket back within', () => {
    const t0 = Date.parse('2026-06-10T12:00:00Z');
    const buckets: AirPoint[] = [];
    for (let i = 0; i < 120; i++) {
      const hot = i >= 30 && i < 75;
      buckets.push({ tsMs: t0 + i * MIN, boxAirC: hot ? 6 : 3, minC: hot ? 5.5 : 2.5, maxC: hot ? 6.5 : 3.5, spanMs: MIN });
    }
    const ex = findExcursions(buckets, COOLER_LIMIT_C);
    expect(ex).toHaveLength(1);
    expect(ex[0]?.startMs).toBe(t0 + 30 * MIN);
    expect(ex[0]?.durationMs).toBe(45 * MIN);
  });
});

describe('scheduled readings of the plan', () => {
  it('at every 4 h an ordinary day has six times, 00:00 to 20:00 local, 4 h apart', () => {
    const times = scheduledTimes('2026-06-10', 'America/Chicago', 4);
    expect(times.map((t) => t.label)).toEqual(['00:00', '04:00', '08:00', '12:00', '16:00', '20:00']);
    // CDT is UTC−5 in June (US DST rules, 15 U.S.C. §260a).
    expect(new Date(times[0]?.atMs ?? 0).toISOString()).toBe('2026-06-10T05:00:00.000Z');
    for (let i = 1; i < times.length; i++) expect((times[i]?.atMs ?? 0) - (times[i - 1]?.atMs ?? 0)).toBe(4 * H);
  });

  it('picks the reading nearest each scheduled time within the tolerance, and none when the nearest is too far', () => {
    const times = scheduledTimes('2026-06-10', 'UTC', 4);
    const base = Date.parse('2026-06-10T00:00:00Z');
    const points = [raw(base + 4 * H - 7 * MIN, 3.1), raw(base + 4 * H + 5 * MIN, 3.4), raw(base + 8 * H + 40 * MIN, 2.2)];
    const picked = pickScheduled(points, times, 30 * MIN);
    expect(picked[1]?.reading).toEqual({ tsMs: base + 4 * H + 5 * MIN, boxAirC: 3.4 });
    expect(picked[2]?.reading).toBeNull(); // 40 min from 08:00, beyond the 30 min tolerance
    expect(picked[0]?.reading).toBeNull();
  });
});

describe('site-local days across a daylight-saving change', () => {
  // US DST starts the second Sunday of March at 02:00 local (15 U.S.C. §260a): 2026-03-08 in America/Chicago.
  it('2026-03-08 in America/Chicago is 23 h long, from 06:00 UTC (CST) to 05:00 UTC next day (CDT)', () => {
    const { startMs, endMs } = localDayBounds('2026-03-08', 'America/Chicago');
    expect(new Date(startMs).toISOString()).toBe('2026-03-08T06:00:00.000Z');
    expect(new Date(endMs).toISOString()).toBe('2026-03-09T05:00:00.000Z');
    expect(endMs - startMs).toBe(23 * H);
  });

  it('the 4-hourly plan on 2026-03-08 keeps wall-clock times: 00:00 CST then 04:00 CDT, three hours later', () => {
    const times = scheduledTimes('2026-03-08', 'America/Chicago', 4);
    expect(times.map((t) => t.label)).toEqual(['00:00', '04:00', '08:00', '12:00', '16:00', '20:00']);
    expect(times.map((t) => new Date(t.atMs).toISOString().slice(11, 16))).toEqual(['06:00', '09:00', '13:00', '17:00', '21:00', '01:00']);
  });

  it('an hourly plan on 2026-03-08 skips 02:00, which does not exist that night', () => {
    const labels = scheduledTimes('2026-03-08', 'America/Chicago', 1).map((t) => t.label);
    expect(labels).toHaveLength(23);
    expect(labels).not.toContain('02:00');
    expect(localTimeToUtcMs('2026-03-08', 2, 30, 'America/Chicago')).toBeNull();
  });

  // US DST ends the first Sunday of November at 02:00 local (15 U.S.C. §260a): 2026-11-01.
  it('2026-11-01 in America/Chicago is 25 h long and 01:00 means its first occurrence (CDT)', () => {
    const { startMs, endMs } = localDayBounds('2026-11-01', 'America/Chicago');
    expect(endMs - startMs).toBe(25 * H);
    expect(new Date(localTimeToUtcMs('2026-11-01', 1, 0, 'America/Chicago') ?? 0).toISOString()).toBe('2026-11-01T06:00:00.000Z');
  });

  it('readings are assigned to the local day: 05:30 UTC on 2026-03-08 is still 2026-03-07 in Chicago, and min/max follow', () => {
    expect(localDayOf(Date.parse('2026-03-08T05:30:00Z'), 'America/Chicago')).toBe('2026-03-07');
    const points = [raw(Date.parse('2026-03-08T05:30:00Z'), 9), raw(Date.parse('2026-03-08T06:30:00Z'), 2), raw(Date.parse('2026-03-09T04:30:00Z'), 4)];
    const [d7, d8] = summarizeDays(points, ['2026-03-07', '2026-03-08'], 'America/Chicago', 4, COOLER_LIMIT_C);
    expect(d7?.maxC).toBe(9);
    expect(d8?.minC).toBe(2);
    expect(d8?.maxC).toBe(4);
    expect(d8?.points).toBe(2);
  });

  it('an excursion crossing local midnight shows on both days with its full duration', () => {
    const start = Date.parse('2026-03-09T04:00:00Z'); // 23:00 CDT on 2026-03-08
    const end = start + 2 * H;
    const points = trace(start - H, 4 * H, (t) => (t >= start && t < end ? 8 : 3));
    const days = summarizeDays(points, ['2026-03-08', '2026-03-09'], 'America/Chicago', 4, COOLER_LIMIT_C);
    expect(days[0]?.excursions.map((e) => e.durationMs)).toEqual([2 * H]);
    expect(days[1]?.excursions.map((e) => e.durationMs)).toEqual([2 * H]);
  });
});

describe('the limit and its source', () => {
  it('a cooler at the 5 °C default names FDA Food Code 2022 §3-501.16(A)(2)', () => {
    const l = foodLogLimit('cooler', 5);
    expect(l.limitC).toBe(5);
    expect(l.source).toContain('FDA Food Code 2022, §3-501.16(A)(2)');
    expect(l.source).toContain('41.0 °F');
  });

  it('a cooler whose own high limit is above 5 °C says so', () => {
    expect(foodLogLimit('cooler', 7).source).toContain('ABOVE the cooler default');
  });

  it('a freezer at the −12 °C default is marked common practice', () => {
    expect(foodLogLimit('freezer', -12).source).toContain('common practice');
  });
});

describe('the period query', () => {
  it('accepts 31 days and refuses 32, a reversed period and a day that does not exist', () => {
    expect(FoodLogQuery.safeParse({ from: '2026-03-01', to: '2026-03-31' }).success).toBe(true);
    expect(FoodLogQuery.safeParse({ from: '2026-03-01', to: '2026-04-01' }).success).toBe(false);
    expect(FoodLogQuery.safeParse({ from: '2026-03-10', to: '2026-03-01' }).success).toBe(false);
    expect(FoodLogQuery.safeParse({ from: '2026-02-30', to: '2026-03-01' }).success).toBe(false);
  });
});
