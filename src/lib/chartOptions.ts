/**
 * The box history chart as a pure function of its data: three stacked grids on one time axis (box
 * air with setpoint and alarm-limit band; superheat with its target band; valve opening), defrost
 * and door-open periods shaded, alarm markers at their raise time, and the resolution to fetch for
 * a span. No ECharts runtime here, so it is testable without a canvas.
 */
import type { ComposeOption } from 'echarts/core';
import type { LineSeriesOption } from 'echarts/charts';
import type {
  DataZoomComponentOption,
  GridComponentOption,
  LegendComponentOption,
  MarkAreaComponentOption,
  MarkLineComponentOption,
  TooltipComponentOption,
} from 'echarts/components';
import type { ReadingPoint } from '@shared/schemas/live';
import type { PeriodIso } from '@shared/schemas/cycles';
import type { AlarmPriority } from '@shared/alarms/types';
import { EVAPORATOR_SUPERHEAT_FLOOR_K, temperatureDeltaForDisplay, temperatureDeltaUnit, temperatureForDisplay, temperatureUnit, type UnitSystem } from '@shared/field';
import { SUPERHEAT_HIGH_BAND_K, SUPERHEAT_LOW_BAND_K } from '@shared/rules/defaults';
import { siteClockText, siteTimeText } from '@/lib/time';

export type ChartOption = ComposeOption<
  LineSeriesOption | GridComponentOption | TooltipComponentOption | DataZoomComponentOption | LegendComponentOption | MarkAreaComponentOption | MarkLineComponentOption
>;
export type ChartResolution = 'raw' | '1m' | '15m' | '1h';

const HOUR = 3_600_000;
/** Bucket length of each resolution (ms); a raw point stands for itself. */
export const BUCKET_MS: Readonly<Record<ChartResolution, number>> = { raw: 0, '1m': 60_000, '15m': 900_000, '1h': HOUR };

/**
 * The resolution to ask for a span, by the readings API's own rule (docs/api.md): up to 6 h raw,
 * up to 2 days 1-minute buckets, up to 31 days 15-minute buckets, beyond that hourly.
 */
export function resolutionForSpan(spanMs: number): ChartResolution {
  if (spanMs <= 6 * HOUR) return 'raw';
  if (spanMs <= 48 * HOUR) return '1m';
  if (spanMs <= 31 * 24 * HOUR) return '15m';
  return '1h';
}

export interface Period {
  startMs: number;
  endMs: number;
}

/** Periods from the rollup series: every bucket with some minutes of the state counts whole; neighbours merge. */
export function periodsFromBuckets(points: readonly ReadingPoint[], key: 'defrostMin' | 'doorOpenMin', bucketMs: number): Period[] {
  const out: Period[] = [];
  for (const p of points) {
    if (!(p[key] > 0)) continue;
    const startMs = Date.parse(p.ts);
    const endMs = startMs + bucketMs;
    const last = out[out.length - 1];
    if (last && startMs <= last.endMs) last.endMs = Math.max(last.endMs, endMs);
    else out.push({ startMs, endMs });
  }
  return out;
}

/** Periods from the cycles answer's ISO pairs. */
export function periodsFromIso(list: readonly PeriodIso[]): Period[] {
  return list.map(([a, b]) => ({ startMs: Date.parse(a), endMs: Date.parse(b) }));
}

/**
 * Zoomed-in points replace the overview's inside [fromMs, toMs); the overview stays outside it, so
 * the slider keeps the whole range while the window shows the finer resolution.
 */
export function mergeZoomed(overview: readonly ReadingPoint[], fine: readonly ReadingPoint[], fromMs: number, toMs: number): ReadingPoint[] {
  const outside = overview.filter((p) => {
    const t = Date.parse(p.ts);
    return t < fromMs || t >= toMs;
  });
  return [...outside, ...fine].sort((a, b) => Date.parse(a.ts) - Date.parse(b.ts));
}

/** The superheat band without a superheat alarm, K: the superheat-low and superheat-high thresholds of shared/rules/defaults. */
export function superheatBandK(targetK: number): { lowK: number; targetK: number; highK: number } {
  return { lowK: Math.min(EVAPORATOR_SUPERHEAT_FLOOR_K, targetK - SUPERHEAT_LOW_BAND_K), targetK, highK: targetK + SUPERHEAT_HIGH_BAND_K };
}

export interface AlarmMark {
  id: number;
  raisedAtMs: number;
  priority: AlarmPriority;
  label: string;
}

export interface ChartInput {
  points: readonly ReadingPoint[];
  resolution: ChartResolution;
  /** The whole range the axis spans (the chosen 6 h / 24 h / 7 d), ms. */
  rangeFromMs: number;
  rangeToMs: number;
  /** The zoom window, when zoomed in (kept across rebuilds). */
  zoom?: Period | null;
  system: UnitSystem;
  setpointC: number | null;
  lowLimitC: number | null;
  highLimitC: number | null;
  superheatBand: { lowK: number; targetK: number; highK: number } | null;
  defrost: readonly Period[];
  door: readonly Period[];
  alarms: readonly AlarmMark[];
  compact: boolean;
  dark: boolean;
  /** The site's IANA zone: the time axis and the tooltip read in it, the tooltip naming it (UTC when absent). */
  timeZone?: string | null;
}

function palette(dark: boolean) {
  return dark
    ? { text: '#c4d2da', grid: '#22394a', air: '#4fc7c0', range: 'rgba(79,199,192,0.10)', limit: '#f07aa8', sh: '#a79bf2', shBand: 'rgba(167,155,242,0.14)', valve: '#7fb0f4', defrost: 'rgba(127,176,244,0.20)', door: 'rgba(240,180,90,0.22)', doorSolid: '#f0b45a', alarm: '#f07aa8' }
    : { text: '#33495a', grid: '#e2e9ed', air: '#127a80', range: 'rgba(18,122,128,0.08)', limit: '#b3275f', sh: '#5d4fc4', shBand: 'rgba(93,79,196,0.10)', valve: '#2f6fc9', defrost: 'rgba(47,111,201,0.14)', door: 'rgba(196,120,20,0.16)', doorSolid: '#c47814', alarm: '#b3275f' };
}

const round = (v: number, d = 1) => Math.round(v * 10 ** d) / 10 ** d;
const GRIDS = [0, 1, 2] as const;

/** markArea data for periods along x. */
function xAreas(periods: readonly Period[], name: string): NonNullable<MarkAreaComponentOption['data']> {
  return periods.map((p) => [{ name, xAxis: p.startMs }, { xAxis: p.endMs }]);
}

/** The full ECharts option for the box history. Temperatures arrive in °C, differences in K; shown in the user's units. */
export function buildChartOption(inp: ChartInput): ChartOption {
  const c = palette(inp.dark);
  const t = (v: number) => round(temperatureForDisplay(v, inp.system));
  const d = (v: number) => round(temperatureDeltaForDisplay(v, inp.system));
  const tu = temperatureUnit(inp.system);
  const du = temperatureDeltaUnit(inp.system);
  const pts = inp.points;
  const ms = (p: ReadingPoint) => Date.parse(p.ts);
  const bucketed = inp.resolution !== 'raw';

  const airMarkLines: NonNullable<MarkLineComponentOption['data']> = [];
  if (inp.setpointC !== null) airMarkLines.push({ name: 'Setpoint', yAxis: t(inp.setpointC), lineStyle: { color: c.air, type: 'dashed' }, label: { formatter: `Setpoint ${t(inp.setpointC)} ${tu}`, position: 'insideEndTop' } });
  for (const [name, v] of [['High limit', inp.highLimitC], ['Low limit', inp.lowLimitC]] as const)
    if (v !== null) airMarkLines.push({ name, yAxis: t(v), lineStyle: { color: c.limit, type: 'dotted' }, label: { formatter: `${name} ${t(v)} ${tu}`, position: 'insideEndTop' } });
  const limitBand: NonNullable<MarkAreaComponentOption['data']> =
    inp.lowLimitC !== null && inp.highLimitC !== null ? [[{ name: 'Within limits', yAxis: t(inp.lowLimitC) }, { yAxis: t(inp.highLimitC) }]] : [];

  const airRefs = [inp.setpointC, inp.lowLimitC, inp.highLimitC].filter((v): v is number => v !== null).map(t);
  const shBand = inp.superheatBand;
  const shadeSeries = (gridIndex: number, name: 'Defrost' | 'Door open', periods: readonly Period[], color: string, solid: string): LineSeriesOption => ({
    id: `${name === 'Defrost' ? 'defrost' : 'door'}-${gridIndex}`,
    name,
    type: 'line',
    xAxisIndex: gridIndex,
    yAxisIndex: gridIndex,
    data: [],
    silent: true,
    itemStyle: { color: solid },
    lineStyle: { color: solid },
    markArea: { silent: true, itemStyle: { color }, label: { show: gridIndex === 0 && !inp.compact, position: 'insideTop', color: c.text, fontSize: 10 }, data: xAreas(periods, name) },
  });

  const series: LineSeriesOption[] = [
    {
      id: 'air',
      name: `Box air (${tu})`,
      type: 'line',
      showSymbol: false,
      xAxisIndex: 0,
      yAxisIndex: 0,
      lineStyle: { width: 2, color: c.air },
      itemStyle: { color: c.air },
      data: pts.map((p) => [ms(p), t(p.boxAirAvgC)]),
      markLine: { silent: true, symbol: 'none', label: { color: c.text, fontSize: 10, show: !inp.compact }, data: airMarkLines },
      markArea: { silent: true, itemStyle: { color: c.range }, label: { show: false }, data: limitBand },
    },
  ];
  if (bucketed) {
    series.push(
      { id: 'air-min', name: 'Box air min/max', type: 'line', showSymbol: false, xAxisIndex: 0, yAxisIndex: 0, lineStyle: { width: 1, type: 'dashed', color: c.air, opacity: 0.6 }, data: pts.map((p) => [ms(p), t(p.boxAirMinC)]) },
      { id: 'air-max', name: 'Box air min/max', type: 'line', showSymbol: false, xAxisIndex: 0, yAxisIndex: 0, lineStyle: { width: 1, type: 'dashed', color: c.air, opacity: 0.6 }, data: pts.map((p) => [ms(p), t(p.boxAirMaxC)]) },
    );
  }
  series.push(
    {
      id: 'superheat',
      name: `Superheat (${du})`,
      type: 'line',
      showSymbol: false,
      xAxisIndex: 1,
      yAxisIndex: 1,
      connectNulls: false,
      lineStyle: { width: 1.5, color: c.sh },
      itemStyle: { color: c.sh },
      data: pts.map((p) => [ms(p), p.superheatAvgK === null ? null : d(p.superheatAvgK)]),
      markArea: shBand ? { silent: true, itemStyle: { color: c.shBand }, label: { show: false }, data: [[{ name: 'Superheat band', yAxis: d(shBand.lowK) }, { yAxis: d(shBand.highK) }]] } : undefined,
      markLine: shBand
        ? { silent: true, symbol: 'none', label: { show: !inp.compact, color: c.text, fontSize: 10, position: 'insideEndTop' }, data: [{ name: 'Target', yAxis: d(shBand.targetK), lineStyle: { color: c.sh, type: 'dashed' }, label: { formatter: `Target ${d(shBand.targetK)} ${du}` } }] }
        : undefined,
    },
    {
      id: 'valve',
      name: 'Valve %',
      type: 'line',
      showSymbol: false,
      xAxisIndex: 2,
      yAxisIndex: 2,
      step: 'end',
      lineStyle: { width: 1, color: c.valve },
      itemStyle: { color: c.valve },
      data: pts.map((p) => [ms(p), p.valveAvgPercent === null ? null : round(p.valveAvgPercent, 0)]),
    },
    ...GRIDS.map((g) => shadeSeries(g, 'Defrost', inp.defrost, c.defrost, c.valve)),
    ...GRIDS.map((g) => shadeSeries(g, 'Door open', inp.door, c.door, c.doorSolid)),
    {
      id: 'alarms',
      name: 'Alarms',
      type: 'line',
      xAxisIndex: 0,
      yAxisIndex: 0,
      data: [],
      itemStyle: { color: c.alarm },
      markLine: {
        symbol: ['none', 'triangle'],
        symbolSize: 8,
        label: { show: !inp.compact, formatter: '{b}', color: c.alarm, fontSize: 10, position: 'insideEndTop' },
        lineStyle: { color: c.alarm, type: 'solid', width: 1 },
        data: inp.alarms.map((a) => ({ name: a.label, xAxis: a.raisedAtMs, lineStyle: { width: a.priority === 'critical' || a.priority === 'high' ? 2 : 1 } })),
      },
    },
  );

  const zoomWindow = inp.zoom ? { startValue: inp.zoom.startMs, endValue: inp.zoom.endMs } : { start: 0, end: 100 };
  const axisLabel = { color: c.text, fontSize: 11 };
  const zone = inp.timeZone ?? null;
  // Ticks in the site's zone (not this device's): the clock alone within a day or so, else with the date.
  const spanMs = (inp.zoom ? inp.zoom.endMs - inp.zoom.startMs : inp.rangeToMs - inp.rangeFromMs) || 0;
  const tick = (v: number) => siteClockText(v, zone, spanMs > 30 * HOUR);
  // The tooltip's heading: the site time with its zone named (and the date once older than 20 h).
  const pointerLabel = { formatter: (p: { value: unknown }) => siteTimeText(new Date(Number(p.value)).toISOString(), zone) };
  return {
    animation: false,
    textStyle: { fontFamily: 'Roboto, system-ui, sans-serif', color: c.text },
    tooltip: { trigger: 'axis', axisPointer: { type: 'line' }, valueFormatter: (v) => (typeof v === 'number' ? String(v) : '—') },
    axisPointer: { link: [{ xAxisIndex: 'all' }] },
    legend: { top: 0, type: 'scroll', textStyle: { color: c.text, fontSize: 11 }, itemWidth: 14, itemHeight: 8 },
    // Fixed margins (no containLabel) so the three plots line up on the shared time axis.
    grid: [
      { left: 44, right: 14, top: 46, height: '37%' },
      { left: 44, right: 14, top: '56%', height: '13%' },
      { left: 44, right: 14, top: '77%', height: '8%' },
    ],
    xAxis: GRIDS.map((g) => ({
      type: 'time' as const,
      gridIndex: g,
      min: inp.rangeFromMs,
      max: inp.rangeToMs,
      axisLine: { lineStyle: { color: c.grid } },
      axisLabel: { ...axisLabel, show: g === 2, hideOverlap: true, formatter: tick },
      axisPointer: { label: pointerLabel },
      axisTick: { show: g === 2 },
      splitLine: { show: false },
    })),
    yAxis: [
      {
        type: 'value',
        gridIndex: 0,
        name: tu,
        nameTextStyle: { color: c.text },
        scale: true,
        // Keep the setpoint and both limits in view, whatever the data does.
        min: (v: { min: number }) => Math.floor(Math.min(v.min, ...airRefs) - 1),
        max: (v: { max: number }) => Math.ceil(Math.max(v.max, ...airRefs) + 1),
        axisLabel,
        splitLine: { lineStyle: { color: c.grid } },
      },
      { type: 'value', gridIndex: 1, name: `SH ${du}`, nameTextStyle: { color: c.sh }, scale: true, splitNumber: 2, axisLabel: { ...axisLabel, color: c.sh }, splitLine: { lineStyle: { color: c.grid } } },
      { type: 'value', gridIndex: 2, name: 'Valve %', nameTextStyle: { color: c.valve }, min: 0, max: 100, splitNumber: 1, axisLabel: { ...axisLabel, color: c.valve }, splitLine: { show: false } },
    ],
    dataZoom: [
      { id: 'zoom-inside', type: 'inside', xAxisIndex: [0, 1, 2], filterMode: 'none', ...zoomWindow },
      { id: 'zoom-slider', type: 'slider', xAxisIndex: [0, 1, 2], filterMode: 'none', height: 18, bottom: 6, labelFormatter: '', ...zoomWindow },
    ],
    series,
  };
}
