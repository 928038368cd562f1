/**
 * Weekly trends of a box or a site: reads the 15 min and 1 h rollups, the defrost periods from the
 * raw readings (the rollups hold defrost time, not defrosts) and the alarms raised in the week and
 * the week before, and hands them to the pure figures of shared/records/trends.ts. Tenant scope:
 * boxes and sites load through the scoped loaders, so another customer's id is a 404.
 */
import { Op, QueryTypes, type Sequelize } from 'sequelize';
import type { SessionUser } from '../../shared/schemas/auth';
import type { BoxTrendDto, SiteTrendDto, TrendWeekDto } from '../../shared/schemas/trends';
import {
  combineSummaries,
  dailyFigures,
  findings,
  hourlySeries,
  isValidIsoWeek,
  lastFullIsoWeek,
  median,
  previousIsoWeek,
  summarize,
  superheatBand,
  superheatBins,
  weekBounds,
  type AlarmFact,
  type DefrostPeriod,
  type RollupBucket,
  type TrendBox,
  type WeekBounds,
} from '../../shared/records/trends';
import type { Box, Models, Site } from '../models';
import { sqlTs } from '../db/sequelize';
import { problems } from '../http/problem';
import { scopeWhere } from '../auth/scope';
import { statePeriods } from '../telemetry/cycles';

const parseDbTs = (s: string) => Date.parse(`${s.slice(0, 23).replace(' ', 'T')}Z`);

/** Reads rollup buckets of a table for boxes in [fromMs, toMs), by box id. */
async function bucketsOf(sequelize: Sequelize, table: 'readings_15m' | 'readings_1h', boxIds: number[], fromMs: number, toMs: number): Promise<Map<number, RollupBucket[]>> {
  const out = new Map<number, RollupBucket[]>(boxIds.map((id) => [id, []]));
  if (!boxIds.length) return out;
  const rows = await sequelize.query<Record<string, number | string>>(
    `SELECT box_id, DATE_FORMAT(bucket_start, '%Y-%m-%d %H:%i:%s') AS bucket, samples, box_air_min_c, box_air_max_c, box_air_sum_c, superheat_sum_k, superheat_n,
            valve_sum_pct, valve_n, covered_ms, compressor_ms, defrost_ms, door_ms
     FROM ${table} WHERE box_id IN (?) AND bucket_start >= ? AND bucket_start < ? ORDER BY box_id, bucket_start`,
    { replacements: [boxIds, sqlTs(fromMs).slice(0, 19), sqlTs(toMs).slice(0, 19)], type: QueryTypes.SELECT },
  );
  for (const r of rows) {
    out.get(Number(r.box_id))?.push({
      startMs: parseDbTs(String(r.bucket)),
      samples: Number(r.samples),
      boxAirMinC: Number(r.box_air_min_c),
      boxAirMaxC: Number(r.box_air_max_c),
      boxAirSumC: Number(r.box_air_sum_c),
      superheatSumK: Number(r.superheat_sum_k),
      superheatN: Number(r.superheat_n),
      valveSumPct: Number(r.valve_sum_pct),
      valveN: Number(r.valve_n),
      coveredMs: Number(r.covered_ms),
      compressorMs: Number(r.compressor_ms),
      defrostMs: Number(r.defrost_ms),
      doorMs: Number(r.door_ms),
    });
  }
  return out;
}

/** Alarms raised on the boxes in [fromMs, toMs), with their acknowledgement time. */
async function alarmsOf(sequelize: Sequelize, boxIds: number[], fromMs: number, toMs: number): Promise<Map<number, AlarmFact[]>> {
  const out = new Map<number, AlarmFact[]>(boxIds.map((id) => [id, []]));
  if (!boxIds.length) return out;
  const rows = await sequelize.query<{ box_id: number; rule_id: string; raised: string; acked: string | null }>(
    `SELECT box_id, rule_id, DATE_FORMAT(raised_at, '%Y-%m-%d %H:%i:%s.%f') AS raised, DATE_FORMAT(acknowledged_at, '%Y-%m-%d %H:%i:%s.%f') AS acked
     FROM alarms WHERE box_id IN (?) AND raised_at >= ? AND raised_at < ? ORDER BY raised_at`,
    { replacements: [boxIds, sqlTs(fromMs), sqlTs(toMs)], type: QueryTypes.SELECT },
  );
  for (const r of rows) out.get(Number(r.box_id))?.push({ ruleId: r.rule_id, raisedAtMs: parseDbTs(r.raised), acknowledgedAtMs: r.acked ? parseDbTs(r.acked) : null });
  return out;
}

/**
 * Hourly superheat and valve means of a box over [fromMs, toMs) from the raw readings taken while the
 * compressor ran (the rollups average the off-cycle in, when superheat is meaningless and the valve
 * shut); as rollup-shaped buckets for the findings. Empty when no raw readings are left.
 */
async function runningHoursOf(sequelize: Sequelize, boxId: number, fromMs: number, toMs: number): Promise<RollupBucket[]> {
  const rows = await sequelize.query<Record<string, number | string | null>>(
    `SELECT TIMESTAMPDIFF(HOUR, '1970-01-01 00:00:00', ts) AS h, COUNT(*) AS n, SUM(superheat_k) AS sh, COUNT(superheat_k) AS shn, SUM(valve_percent) AS v, COUNT(valve_percent) AS vn
     FROM readings WHERE box_id = ? AND ts >= ? AND ts < ? AND compressor_on = 1 GROUP BY h ORDER BY h`,
    { replacements: [boxId, sqlTs(fromMs), sqlTs(toMs)], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    startMs: Number(r.h) * 3_600_000,
    samples: Number(r.n),
    boxAirMinC: 0,
    boxAirMaxC: 0,
    boxAirSumC: 0,
    superheatSumK: Number(r.sh ?? 0),
    superheatN: Number(r.shn),
    valveSumPct: Number(r.v ?? 0),
    valveN: Number(r.vn),
    coveredMs: 0,
    compressorMs: 0,
    defrostMs: 0,
    doorMs: 0,
  }));
}

/** Defrost periods of a box in [fromMs, toMs) from the raw readings. */
async function defrostsOf(sequelize: Sequelize, boxId: number, fromMs: number, toMs: number): Promise<DefrostPeriod[]> {
  const { defrost } = await statePeriods(sequelize, boxId, fromMs, toMs);
  return defrost.map(([a, b]) => ({ startMs: Date.parse(a), endMs: Date.parse(b) }));
}

const weekDto = (b: WeekBounds): TrendWeekDto => ({ week: b.week, from: new Date(b.startMs).toISOString(), to: new Date(b.endMs).toISOString(), hours: b.hours, days: b.days, timeZone: b.timeZone });

/** The week asked for (validated) or the last full week in the zone; a week 53 the year lacks is a 400. */
export function resolveWeek(week: string | undefined, timeZone: string, nowMs = Date.now()): string {
  if (week === undefined) return lastFullIsoWeek(nowMs, timeZone);
  if (!isValidIsoWeek(week)) throw problems.badRequest(`${week} does not exist: that year has 52 ISO weeks.`);
  return week;
}

const trendBoxOf = (b: Box): TrendBox => ({
  boxId: b.id,
  boxName: b.name,
  highLimitC: b.highLimitC,
  lowLimitC: b.lowLimitC,
  superheatTargetK: b.superheatTargetK,
  defrostMaxMin: b.defrostMaxMin,
  defrostType: b.defrostType,
});

/** Trends of several boxes of one site for a week and the week before (no scope check here: callers load scoped); with onlyBoxId, raw defrosts are read for that box only. */
export async function trendsOfBoxes(sequelize: Sequelize, site: Site, boxes: Box[], week: string, onlyBoxId?: number): Promise<BoxTrendDto[]> {
  const cur = weekBounds(week, site.timeZone);
  const prev = weekBounds(previousIsoWeek(week), site.timeZone);
  const ids = boxes.map((b) => b.id);
  const [q15, q1h, alarms] = await Promise.all([
    bucketsOf(sequelize, 'readings_15m', ids, prev.startMs, cur.endMs),
    bucketsOf(sequelize, 'readings_1h', ids, prev.startMs, cur.endMs),
    alarmsOf(sequelize, ids, prev.startMs, cur.endMs),
  ]);
  const inWeek = <T extends { startMs: number }>(xs: readonly T[], w: WeekBounds) => xs.filter((x) => x.startMs >= w.startMs && x.startMs < w.endMs);
  const alarmsIn = (xs: readonly AlarmFact[], w: WeekBounds) => xs.filter((a) => a.raisedAtMs >= w.startMs && a.raisedAtMs < w.endMs);

  const partial = [];
  for (const b of boxes) {
    const tb = trendBoxOf(b);
    const all15 = q15.get(b.id) ?? [];
    const all1h = q1h.get(b.id) ?? [];
    // The raw readings are the costly part: with onlyBoxId the other boxes serve only the door-open median.
    const detailed = onlyBoxId === undefined || onlyBoxId === b.id;
    const defrosts = detailed ? await defrostsOf(sequelize, b.id, prev.startMs, cur.endMs) : [];
    const running = detailed ? await runningHoursOf(sequelize, b.id, cur.startMs, cur.endMs) : [];
    const [c15, p15, c1h, p1h] = [inWeek(all15, cur), inWeek(all15, prev), inWeek(all1h, cur), inWeek(all1h, prev)];
    const [cDef, pDef] = [inWeek(defrosts, cur), inWeek(defrosts, prev)];
    const summary = summarize(c15, cDef, alarmsIn(alarms.get(b.id) ?? [], cur), tb);
    const previousSummary = summarize(p15, pDef, alarmsIn(alarms.get(b.id) ?? [], prev), tb);
    const notes: string[] = [];
    const defrostMs = c15.reduce((s, x) => s + x.defrostMs, 0);
    if (defrostMs > 0 && cDef.length === 0) notes.push('The rollups show defrost time but no raw readings are left for the week, so defrosts cannot be counted (raw readings are kept for a limited time).');
    if (!c15.length) notes.push('No readings for this week.');
    notes.push('Time in range and minutes above the limit are read from 15-minute means: a short peak inside a quarter-hour does not count.');
    if (detailed && !running.length && c1h.length) notes.push('No raw readings are left for the week: the superheat finding reads hourly rollup means, which include the off-cycle.');
    partial.push({ box: b, tb, c1h: running.length ? running : c1h, cDef, summary, previousSummary, notes, days: dailyFigures(c15, cDef, cur, tb), previousDays: dailyFigures(p15, pDef, prev, tb), hours: hourlySeries(c1h), previousHours: hourlySeries(p1h), bins: superheatBins(c15), previousBins: superheatBins(p15) });
  }
  const doorMedian = boxes.length > 1 ? median(partial.map((p) => p.summary.doorOpenMin)) : null;
  return partial.map((p) => ({
    boxId: p.box.id,
    boxName: p.box.name,
    siteId: site.id,
    siteName: site.name,
    kind: p.box.kind,
    setpointC: p.box.setpointC,
    highLimitC: p.box.highLimitC,
    lowLimitC: p.box.lowLimitC,
    superheatTargetK: p.box.superheatTargetK,
    superheatBandK: superheatBand(p.box.superheatTargetK),
    week: weekDto(cur),
    previousWeek: weekDto(prev),
    hours: p.hours,
    previousHours: p.previousHours,
    days: p.days,
    previousDays: p.previousDays,
    superheatBins: p.bins,
    previousSuperheatBins: p.previousBins,
    summary: p.summary,
    previousSummary: p.previousSummary,
    findings: findings({ box: p.tb, hourBuckets: p.c1h, defrosts: p.cDef, summary: p.summary, previousSummary: p.previousSummary, siteDoorMedianMin: doorMedian }),
    notes: p.notes,
  }));
}

/** A box's trends for the week (default the last full week in its site's zone); 404 outside the user's scope. */
export async function boxTrend(models: Models, sequelize: Sequelize, user: SessionUser, boxId: number, week?: string): Promise<BoxTrendDto> {
  const box = await models.Box.findOne({ where: { [Op.and]: [{ id: boxId }, scopeWhere(user)] } });
  if (!box) throw problems.notFound('box');
  const site = await models.Site.findByPk(box.siteId);
  if (!site) throw problems.notFound('box');
  const w = resolveWeek(week, site.timeZone);
  // The site's other boxes give the door-open median the finding compares with.
  const siblings = await models.Box.findAll({ where: { siteId: site.id }, order: [['id', 'ASC']] });
  const all = await trendsOfBoxes(sequelize, site, siblings, w, box.id);
  const mine = all.find((t) => t.boxId === box.id);
  if (!mine) throw problems.notFound('box');
  return mine;
}

/** A site's trends: every box, the totals and all findings; 404 outside the user's scope. */
export async function siteTrend(models: Models, sequelize: Sequelize, user: SessionUser, siteId: number, week?: string): Promise<SiteTrendDto> {
  const site = await models.Site.findOne({ where: { [Op.and]: [{ id: siteId }, scopeWhere(user)] } });
  if (!site) throw problems.notFound('site');
  return siteTrendOf(models, sequelize, site, resolveWeek(week, site.timeZone));
}

/** A site's trends for a resolved week (no scope check: for the weekly report and scoped callers). */
export async function siteTrendOf(models: Models, sequelize: Sequelize, site: Site, week: string): Promise<SiteTrendDto> {
  const boxes = await models.Box.findAll({ where: { siteId: site.id }, order: [['id', 'ASC']] });
  const trends = await trendsOfBoxes(sequelize, site, boxes, week);
  const cur = weekBounds(week, site.timeZone);
  const prev = weekBounds(previousIsoWeek(week), site.timeZone);
  const ids = boxes.map((b) => b.id);
  const alarms = await alarmsOf(sequelize, ids, prev.startMs, cur.endMs);
  const flat = [...alarms.values()].flat();
  const within = (w: WeekBounds) => flat.filter((a) => a.raisedAtMs >= w.startMs && a.raisedAtMs < w.endMs);
  return {
    siteId: site.id,
    siteName: site.name,
    week: weekDto(cur),
    summary: combineSummaries(
      trends.map((t) => t.summary),
      within(cur),
    ),
    previousSummary: combineSummaries(
      trends.map((t) => t.previousSummary),
      within(prev),
    ),
    boxes: trends,
    findings: trends.flatMap((t) => t.findings),
  };
}

const csvCell = (v: string | number | null) => {
  if (v === null) return '';
  const s = String(v);
  // A leading = + - @ would be read as a formula by spreadsheets (CSV injection): quote and prefix.
  const safe = /^[=+\-@]/.test(s) && !/^-?\d/.test(s) ? `'${s}` : s;
  return /[",\n]/.test(safe) ? `"${safe.replace(/"/g, '""')}"` : safe;
};

/** The daily figures of some box trends as CSV text (one row per box and local day). */
export function dailyCsv(trends: readonly BoxTrendDto[]): string {
  const head = ['site', 'box', 'iso_week', 'day', 'covered_min', 'box_air_mean_c', 'box_air_min_c', 'box_air_max_c', 'time_in_range_pct', 'minutes_above_limit', 'high_limit_c', 'compressor_duty_pct', 'defrost_count', 'defrost_mean_min', 'defrost_min', 'door_open_min'];
  const lines = [head.join(',')];
  for (const t of trends) {
    for (const d of t.days) {
      lines.push(
        [t.siteName, t.boxName, t.week.week, d.day, d.coveredMin, d.boxAirMeanC, d.boxAirMinC, d.boxAirMaxC, d.timeInRangePercent, d.minutesAboveLimit, t.highLimitC, d.compressorDutyPercent, d.defrostCount, d.defrostMeanMin, d.defrostMin, d.doorOpenMin]
          .map(csvCell)
          .join(','),
      );
    }
  }
  return `${lines.join('\r\n')}\r\n`;
}
