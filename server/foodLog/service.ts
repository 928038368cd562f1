/**
 * The food-safety temperature log of a box: loads the stored box-air figures of a period (raw
 * readings while the raw partitions still hold the day, else the 1-minute rollups), cuts them into
 * site-local days with the shared pure functions (shared/records/excursions.ts) and joins the day's
 * log entries and sign-off. Entry writes live in ./entries.ts.
 */
import { Op, QueryTypes, type Sequelize } from 'sequelize';
import { CAUTIONS } from '../../shared/safety';
import { DEFAULT_FOOD_LOG_INTERVAL_H, SCHEDULE_TOLERANCE_MS, foodLogLimit, summarizeDays, type AirPoint } from '../../shared/records/excursions';
import { addDays, daysBetween, localDayBounds, localDayOf } from '../../shared/records/zonedTime';
import type { FoodLogDayDto, FoodLogDto, FoodLogEntryDto, FoodLogQuery, FoodLogSource } from '../../shared/schemas/foodLog';
import type { SessionUser } from '../../shared/schemas/auth';
import type { ReadingFlag } from '../../shared/schemas/live';
import type { AppContext } from '../context';
import type { Models, Site } from '../models';
import type { FoodLogEntry } from '../models/foodLog';
import { sqlTs } from '../db/sequelize';
import { problems } from '../http/problem';
import { loadScopedBox, type BoxWithRelations } from '../boxes/service';

const DAY_MS = 86_400_000;

/** A box the user may see with its site (time zone) and customer name; 404 for another tenant's box. */
export interface FoodLogBox {
  box: BoxWithRelations;
  site: Site;
  customerName: string;
}

/** Loads a box in the user's scope with its site; a 404 problem otherwise. */
export async function loadFoodLogBox(models: Models, user: SessionUser, boxId: number): Promise<FoodLogBox> {
  const box = await loadScopedBox(models, user, boxId);
  const site = await models.Site.findByPk(box.siteId);
  if (!site) throw problems.notFound('box');
  return { box, site, customerName: box.customer?.name ?? '' };
}

/** The site's plan interval, h (the 4 h default when the site has no setting). */
export async function siteIntervalH(models: Models, siteId: number): Promise<number> {
  const s = await models.FoodLogSiteSetting.findByPk(siteId);
  return s?.foodLogIntervalH ?? DEFAULT_FOOD_LOG_INTERVAL_H;
}

/** Today's `YYYY-MM-DD` in the site's zone. */
export function siteToday(timeZone: string, nowMs = Date.now()): string {
  return localDayOf(nowMs, timeZone);
}

const utcMs = (s: string) => Date.parse(`${s.replace(' ', 'T').slice(0, 23)}Z`);

/** True when a reading's quality flags doubt its box-air value (a failed or implausible box-air sensor). */
export function boxAirDoubted(flagsJson: string | null): boolean {
  if (!flagsJson) return false;
  try {
    const flags = JSON.parse(flagsJson) as ReadingFlag[];
    return flags.some((f) => f.sensor === 'boxAirC' || f.affects.includes('boxAirC'));
  } catch {
    return false;
  }
}

/** Raw box-air readings of a box in [fromMs, toMs), time-ordered, without those whose box-air sensor is flagged (their times are returned apart). */
async function rawPoints(sequelize: Sequelize, boxId: number, fromMs: number, toMs: number): Promise<{ points: AirPoint[]; doubtedMs: number[] }> {
  const rows = await sequelize.query<{ ts: string; c: number | string; f: string | null }>(
    `SELECT DATE_FORMAT(ts, '%Y-%m-%d %H:%i:%s.%f') AS ts, box_air_c AS c, quality_flags AS f FROM readings WHERE box_id = ? AND ts >= ? AND ts < ? ORDER BY ts`,
    { replacements: [boxId, sqlTs(fromMs), sqlTs(toMs)], type: QueryTypes.SELECT },
  );
  const points: AirPoint[] = [];
  const doubtedMs: number[] = [];
  for (const r of rows) {
    const tsMs = utcMs(r.ts);
    if (boxAirDoubted(r.f)) {
      doubtedMs.push(tsMs);
      continue;
    }
    const c = Number(r.c);
    points.push({ tsMs, boxAirC: c, minC: c, maxC: c, spanMs: 0 });
  }
  return { points, doubtedMs };
}

/** 1-minute rollup buckets of a box starting in [fromMs, toMs), time-ordered (bucket mean, min, max). */
async function rollupPoints(sequelize: Sequelize, boxId: number, fromMs: number, toMs: number): Promise<AirPoint[]> {
  const rows = await sequelize.query<{ b: string; n: number | string; mn: number | string; mx: number | string; sm: number | string }>(
    `SELECT DATE_FORMAT(bucket_start, '%Y-%m-%d %H:%i:%s') AS b, samples AS n, box_air_min_c AS mn, box_air_max_c AS mx, box_air_sum_c AS sm
     FROM readings_1m WHERE box_id = ? AND bucket_start >= ? AND bucket_start < ? ORDER BY bucket_start`,
    { replacements: [boxId, sqlTs(fromMs).slice(0, 19), sqlTs(toMs).slice(0, 19)], type: QueryTypes.SELECT },
  );
  return rows
    .filter((r) => Number(r.n) > 0)
    .map((r) => ({ tsMs: utcMs(r.b), boxAirC: Number(r.sm) / Number(r.n), minC: Number(r.mn), maxC: Number(r.mx), spanMs: 60_000 }));
}

/**
 * The figures of the days (site-local) with the source used for each: raw while the raw partitions
 * hold the whole day (from the UTC day of now − RETENTION_RAW_DAYS on), else the 1-minute rollups,
 * else whatever raw is left. One day reads one source, so durations never mix resolutions within it.
 */
export async function airPointsByDay(
  ctx: AppContext,
  boxId: number,
  days: string[],
  timeZone: string,
  nowMs = Date.now(),
): Promise<{ points: AirPoint[]; sources: Map<string, FoodLogSource>; doubted: Map<string, number> }> {
  const first = days[0];
  const last = days[days.length - 1];
  if (!first || !last) return { points: [], sources: new Map(), doubted: new Map() };
  const fromMs = localDayBounds(first, timeZone).startMs;
  const toMs = localDayBounds(last, timeZone).endMs;
  const [{ points: raw, doubtedMs }, rollup] = await Promise.all([rawPoints(ctx.sequelize, boxId, fromMs, toMs), rollupPoints(ctx.sequelize, boxId, fromMs, toMs)]);
  const doubted = new Map<string, number>();
  for (const t of doubtedMs) doubted.set(localDayOf(t, timeZone), (doubted.get(localDayOf(t, timeZone)) ?? 0) + 1);
  const rawCutoffMs = Math.floor((nowMs - ctx.config.RETENTION_RAW_DAYS * DAY_MS) / DAY_MS) * DAY_MS;
  const byDay = (pts: AirPoint[]) => {
    const m = new Map<string, AirPoint[]>();
    for (const p of pts) {
      const d = localDayOf(p.tsMs, timeZone);
      let list = m.get(d);
      if (!list) m.set(d, (list = []));
      list.push(p);
    }
    return m;
  };
  const rawBy = byDay(raw);
  const rollBy = byDay(rollup);
  const points: AirPoint[] = [];
  const sources = new Map<string, FoodLogSource>();
  for (const day of days) {
    const r = rawBy.get(day) ?? [];
    const u = rollBy.get(day) ?? [];
    const rawWhole = localDayBounds(day, timeZone).startMs >= rawCutoffMs;
    const hadRaw = r.length > 0 || (doubted.get(day) ?? 0) > 0;
    const source: FoodLogSource = hadRaw && (rawWhole || u.length === 0) ? 'raw' : u.length > 0 ? 'rollup-1m' : 'none';
    sources.set(day, source);
    if (source === 'raw') points.push(...r);
    else if (source === 'rollup-1m') points.push(...u);
  }
  return { points, sources, doubted };
}

/** An entry as the API answers it. */
export function entryDto(e: FoodLogEntry, correctedBy: number[], signedAtMs: number | null): FoodLogEntryDto {
  return {
    id: e.id,
    boxId: e.boxId,
    day: e.day,
    kind: e.kind,
    text: e.text,
    byUserId: e.byUserId,
    byName: e.byName,
    at: e.at.toISOString(),
    recordedAt: e.recordedAt.toISOString(),
    refersToId: e.refersToId,
    productProbeC: e.productProbeC,
    excursionStartAt: e.excursionStartAt ? e.excursionStartAt.toISOString() : null,
    correctedBy,
    afterSignOff: e.kind !== 'sign-off' && signedAtMs !== null && e.recordedAt.getTime() > signedAtMs,
  };
}

/** The first sign-off entry of each day among the entries. */
export function signOffsByDay(entries: readonly FoodLogEntry[]): Map<string, FoodLogEntry> {
  const out = new Map<string, FoodLogEntry>();
  for (const e of entries) if (e.kind === 'sign-off' && !out.has(e.day)) out.set(e.day, e);
  return out;
}

/** The entries of a box on the days from..to, in the order they were recorded. */
export async function entriesOf(models: Models, boxId: number, from: string, to: string): Promise<FoodLogEntry[]> {
  return models.FoodLogEntry.findAll({ where: { boxId, day: { [Op.between]: [from, to] } }, order: [['recordedAt', 'ASC'], ['id', 'ASC']] });
}

const isoOrNull = (ms: number | null) => (ms === null ? null : new Date(ms).toISOString());

/** The log of a loaded box over a period of site-local days (at most 31, checked by the query schema). */
export async function foodLogOf(ctx: AppContext, fb: FoodLogBox, q: FoodLogQuery, nowMs = Date.now()): Promise<FoodLogDto> {
  const { box, site } = fb;
  const tz = site.timeZone;
  const intervalH = await siteIntervalH(ctx.models, site.id);
  const limit = foodLogLimit(box.kind, box.highLimitC);
  const days = daysBetween(q.from, q.to);
  // One day either side, so an excursion running across the period's edges keeps its true start and end.
  const { points, sources, doubted } = await airPointsByDay(ctx, box.id, [addDays(q.from, -1), ...days, addDays(q.to, 1)], tz, nowMs);
  const summaries = summarizeDays(points, days, tz, intervalH, limit.limitC, SCHEDULE_TOLERANCE_MS);
  const entries = await entriesOf(ctx.models, box.id, q.from, q.to);
  const signed = signOffsByDay(entries);
  const corrections = new Map<number, number[]>();
  for (const e of entries) if (e.refersToId !== null) corrections.set(e.refersToId, [...(corrections.get(e.refersToId) ?? []), e.id]);
  const dayDtos: FoodLogDayDto[] = summaries.map((s) => {
    const sign = signed.get(s.day) ?? null;
    const signedAtMs = sign ? sign.recordedAt.getTime() : null;
    return {
      day: s.day,
      source: sources.get(s.day) ?? 'none',
      doubtedReadings: sources.get(s.day) === 'raw' ? (doubted.get(s.day) ?? 0) : 0,
      scheduled: s.scheduled.map((x) => ({ label: x.label, at: new Date(x.atMs).toISOString(), readingAt: isoOrNull(x.reading?.tsMs ?? null), boxAirC: x.reading?.boxAirC ?? null })),
      minC: s.minC,
      maxC: s.maxC,
      excursions: s.excursions.map((e) => ({
        start: new Date(e.startMs).toISOString(),
        end: isoOrNull(e.endMs),
        durationMin: Math.round((e.durationMs / 60_000) * 10) / 10,
        peakC: e.peakC,
        open: e.open,
        longestGapMin: Math.round((e.longestGapMs / 60_000) * 10) / 10,
      })),
      entries: entries.filter((e) => e.day === s.day).map((e) => entryDto(e, corrections.get(e.id) ?? [], signedAtMs)),
      signedOff: sign ? { entryId: sign.id, byName: sign.byName, at: sign.recordedAt.toISOString() } : null,
    };
  });
  return {
    box: { id: box.id, name: box.name, kind: box.kind },
    site: { id: site.id, name: site.name, timeZone: tz },
    customer: { id: box.customerId, name: fb.customerName },
    from: q.from,
    to: q.to,
    limitC: limit.limitC,
    limitSource: limit.source,
    intervalH,
    toleranceMin: SCHEDULE_TOLERANCE_MS / 60_000,
    statement: `${CAUTIONS.foodSafety.text} The box-air figures here are a record of the equipment, not a compliance finding.`,
    sourceNote:
      'Figures come from the stored box-air readings: raw readings (every reading as sent) while they are kept, 1-minute rollups (mean, min, max per minute) for older days; each day says which. Raw readings whose box-air sensor is flagged (open, shorted, implausible, stuck) are left out and counted. ' +
      'An excursion runs from the first figure above the limit to the first one back at or below it.',
    days: dayDtos,
  };
}
