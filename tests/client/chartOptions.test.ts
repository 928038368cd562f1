/**
 * The box history chart's option builder (src/lib/chartOptions.ts): the limit and superheat bands,
 * shaded periods from the discrete (per-bucket) series, alarm markers, zoom kept across rebuilds,
 * and the resolution asked for a span.
 */
import { describe, expect, it } from 'vitest';
import type { LineSeriesOption } from 'echarts/charts';
import type { ReadingPoint } from '@shared/schemas/live';
import { buildChartOption, mergeZoomed, periodsFromBuckets, periodsFromIso, resolutionForSpan, superheatBandK, type ChartInput } from '@/lib/chartOptions';

const H = 3_600_000;
const T0 = Date.parse('2030-01-15T00:00:00.000Z');
const Q = 15 * 60_000;

function pt(tMs: number, over: Partial<ReadingPoint> = {}): ReadingPoint {
  return {
    ts: new Date(tMs).toISOString(),
    boxAirMinC: 1.5,
    boxAirAvgC: 2,
    boxAirMaxC: 2.5,
    superheatAvgK: 5,
    valveAvgPercent: 40,
    suctionAvgKPaG: 250,
    compressorDuty: 0.5,
    defrostMin: 0,
    doorOpenMin: 0,
    samples: 90,
    ...over,
  };
}

function input(over: Partial<ChartInput> = {}): ChartInput {
  return {
    points: [pt(T0), pt(T0 + Q)],
    resolution: '15m',
    rangeFromMs: T0,
    rangeToMs: T0 + 24 * H,
    zoom: null,
    system: 'metric-kpa',
    setpointC: 2,
    lowLimitC: 0,
    highLimitC: 5,
    superheatBand: superheatBandK(4),
    defrost: [],
    door: [],
    alarms: [],
    compact: false,
    dark: false,
    ...over,
  };
}

function seriesById(opt: ReturnType<typeof buildChartOption>, id: string): LineSeriesOption {
  const s = (opt.series as LineSeriesOption[]).find((x) => x.id === id);
  if (!s) throw new Error(`no series ${id}`);
  return s;
}

describe('resolution for a span', () => {
  it('follows the readings API rule: raw to 6 h, 1-minute to 2 days, 15-minute to 31 days, then hourly', () => {
    // The rule as docs/api.md states it for resolution=auto.
    expect(resolutionForSpan(6 * H)).toBe('raw');
    expect(resolutionForSpan(6 * H + 1)).toBe('1m');
    expect(resolutionForSpan(48 * H)).toBe('1m');
    expect(resolutionForSpan(7 * 24 * H)).toBe('15m');
    expect(resolutionForSpan(31 * 24 * H + 1)).toBe('1h');
  });
});

describe('bands', () => {
  it('shades the band between the alarm limits and draws the setpoint, in °F for an imperial user', () => {
    const air = seriesById(buildChartOption(input({ system: 'imperial' })), 'air');
    // 0 °C = 32 °F and 5 °C = 41 °F; 2 °C = 35.6 °F (°F = °C × 1.8 + 32, exact by definition).
    expect(air.markArea?.data).toEqual([[{ name: 'Within limits', yAxis: 32 }, { yAxis: 41 }]]);
    const lines = (air.markLine?.data ?? []) as Array<{ name: string; yAxis: number }>;
    expect(lines.map((l) => [l.name, l.yAxis])).toEqual([
      ['Setpoint', 35.6],
      ['High limit', 41],
      ['Low limit', 32],
    ]);
  });

  it('shades the superheat band from the superheat alarm thresholds around the target', () => {
    // Target 4 K: low = min(5 °F floor = 2.78 K, 4 − 1.5 K) = 2.5 K; high = 4 + 5 K = 9 K (shared/rules/defaults, our choice).
    const band = superheatBandK(4);
    expect(band.lowK).toBeCloseTo(2.5, 9);
    expect(band.highK).toBeCloseTo(9, 9);
    const sh = seriesById(buildChartOption(input()), 'superheat');
    expect(sh.markArea?.data).toEqual([[{ name: 'Superheat band', yAxis: 2.5 }, { yAxis: 9 }]]);
    expect(sh.yAxisIndex).toBe(1);
    expect(seriesById(buildChartOption(input()), 'valve').yAxisIndex).toBe(2);
  });

  it('leaves the bands out when the limits and the target are unknown', () => {
    const opt = buildChartOption(input({ lowLimitC: null, highLimitC: null, setpointC: null, superheatBand: null }));
    expect(seriesById(opt, 'air').markArea?.data).toEqual([]);
    expect(seriesById(opt, 'superheat').markArea).toBeUndefined();
  });
});

describe('shaded periods', () => {
  it('turns a per-bucket series into merged periods, a bucket with any minutes counting whole', () => {
    const points = [pt(T0), pt(T0 + Q, { defrostMin: 10 }), pt(T0 + 2 * Q, { defrostMin: 15 }), pt(T0 + 3 * Q), pt(T0 + 4 * Q, { defrostMin: 5 })];
    expect(periodsFromBuckets(points, 'defrostMin', Q)).toEqual([
      { startMs: T0 + Q, endMs: T0 + 3 * Q },
      { startMs: T0 + 4 * Q, endMs: T0 + 5 * Q },
    ]);
    expect(periodsFromBuckets(points, 'doorOpenMin', Q)).toEqual([]);
  });

  it('shades every grid for each defrost and door-open period', () => {
    const defrost = periodsFromIso([['2030-01-15T01:00:00.000Z', '2030-01-15T01:30:00.000Z']]);
    const door = periodsFromIso([['2030-01-15T03:00:00.000Z', '2030-01-15T03:02:00.000Z']]);
    const opt = buildChartOption(input({ defrost, door }));
    for (const g of [0, 1, 2]) {
      expect(seriesById(opt, `defrost-${g}`).markArea?.data).toEqual([[{ name: 'Defrost', xAxis: T0 + H }, { xAxis: T0 + 1.5 * H }]]);
      expect(seriesById(opt, `door-${g}`).markArea?.data).toEqual([[{ name: 'Door open', xAxis: T0 + 3 * H }, { xAxis: T0 + 3 * H + 2 * 60_000 }]]);
      expect(seriesById(opt, `door-${g}`).xAxisIndex).toBe(g);
    }
  });
});

describe('alarm markers', () => {
  it('marks each alarm at its raise time with its priority and rule', () => {
    const opt = buildChartOption(input({ alarms: [{ id: 9, raisedAtMs: T0 + 2 * H, priority: 'high', label: 'High: Box air too warm' }] }));
    const data = seriesById(opt, 'alarms').markLine?.data as Array<{ name: string; xAxis: number }>;
    expect(data.map((d) => [d.name, d.xAxis])).toEqual([['High: Box air too warm', T0 + 2 * H]]);
  });
});

describe('zoom', () => {
  it('keeps the zoom window in the option and links all three x axes', () => {
    const opt = buildChartOption(input({ zoom: { startMs: T0 + H, endMs: T0 + 2 * H } }));
    const zooms = opt.dataZoom as Array<{ type: string; startValue?: number; endValue?: number; xAxisIndex: number[] }>;
    expect(zooms.map((z) => z.type)).toEqual(['inside', 'slider']);
    for (const z of zooms) {
      expect(z.startValue).toBe(T0 + H);
      expect(z.endValue).toBe(T0 + 2 * H);
      expect(z.xAxisIndex).toEqual([0, 1, 2]);
    }
  });

  it('splices the finer points of the zoom window into the overview', () => {
    const overview = [pt(T0), pt(T0 + Q), pt(T0 + 2 * Q), pt(T0 + 3 * Q)];
    const fine = [pt(T0 + Q + 60_000, { samples: 1 }), pt(T0 + Q + 120_000, { samples: 1 })];
    const merged = mergeZoomed(overview, fine, T0 + Q, T0 + 2 * Q);
    expect(merged.map((p) => Date.parse(p.ts) - T0)).toEqual([0, Q + 60_000, Q + 120_000, 2 * Q, 3 * Q]);
  });
});

describe('site time zone', () => {
  type AxisFormatter = (v: number) => string;
  type PointerFormatter = (p: { value: unknown }) => string;
  function bottomAxis(opt: ReturnType<typeof buildChartOption>) {
    const axes = opt.xAxis as Array<{ axisLabel?: { show?: boolean; formatter?: unknown }; axisPointer?: { label?: { formatter?: unknown } } }>;
    const a = axes.find((x) => x.axisLabel?.show);
    if (!a) throw new Error('no labelled time axis');
    return a;
  }

  it("labels the time axis in the site's zone, not this device's, and names the zone in the tooltip", () => {
    // America/Chicago is UTC−6 in January (IANA tz database): 18:00 UTC is 12:00 there.
    const at = Date.parse('2030-01-15T18:00:00.000Z');
    const opt = buildChartOption(input({ timeZone: 'America/Chicago' }));
    const axis = bottomAxis(opt);
    expect((axis.axisLabel?.formatter as AxisFormatter)(at)).toBe('12:00');
    const head = (axis.axisPointer?.label?.formatter as PointerFormatter)({ value: at });
    expect(head).toMatch(/12:00/);
    expect(head).toMatch(/CST|GMT-6/);
    // Europe/Berlin (UTC+1 in January): the same instant reads 19:00.
    expect((bottomAxis(buildChartOption(input({ timeZone: 'Europe/Berlin' }))).axisLabel?.formatter as AxisFormatter)(at)).toBe('19:00');
  });

  it('adds the date to the ticks over a span of several days', () => {
    const at = Date.parse('2030-01-15T18:00:00.000Z');
    const week = buildChartOption(input({ timeZone: 'America/Chicago', rangeFromMs: T0 - 6 * 24 * H, rangeToMs: T0 + 24 * H }));
    expect((bottomAxis(week).axisLabel?.formatter as AxisFormatter)(at)).toMatch(/15 Jan|Jan 15/);
  });
});
