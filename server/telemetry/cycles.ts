/**
 * Cycle timers of a box, computed from its stored readings: how long the compressor has run (or
 * been off), starts in the last hour, the last defrost and the next one by the box's interval, and
 * door-open time now and today (site-local day). Also the defrost and door-open periods of a span,
 * for the chart's shading. Only state changes leave the database (a window function picks them).
 */
import { Router } from 'express';
import { QueryTypes, type Sequelize } from 'sequelize';
import { CyclesQuery, type BoxCyclesDto, type PeriodIso } from '../../shared/schemas/cycles';
import type { AppContext } from '../context';
import { currentUser, requireAuth, scopeWhere } from '../auth/guards';
import { problems } from '../http/problem';
import { parseId, parseQuery } from '../http/validate';
import { sqlTs } from '../db/sequelize';

const MIN = 60_000;
const HOUR = 3_600_000;
/**
 * A reading's states hold until the next reading, but at most this long (ms; our choice): a gap
 * longer than this (controller offline, nothing buffered) counts as unknown, not as "still open".
 * Controllers report every 10 s and on every change (docs/device-protocol.md).
 */
export const STATE_HOLD_MAX_MS = 5 * MIN;

/** One state change (or the first reading, or the first reading after a gap) as read from the database. */
export interface StateChange {
  tsMs: number;
  compressorOn: boolean;
  defrostOn: boolean;
  doorOpen: boolean;
  /** Time of the reading before this one (ms), null for the first of the window. */
  prevTsMs: number | null;
}

/** A run of constant states [startMs, endMs). */
interface Segment {
  startMs: number;
  endMs: number;
  compressorOn: boolean;
  defrostOn: boolean;
  doorOpen: boolean;
  /** The previous segment ends exactly where this one starts (no gap between them). */
  joined: boolean;
}

function offsetMs(atMs: number, timeZone: string): number {
  const parts = new Intl.DateTimeFormat('en-US', { timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit' }).formatToParts(
    new Date(atMs),
  );
  const g = (t: string) => Number(parts.find((p) => p.type === t)?.value ?? 0);
  return Date.UTC(g('year'), g('month') - 1, g('day'), g('hour'), g('minute'), g('second')) - Math.floor(atMs / 1000) * 1000;
}

function localMidnightMs(y: number, m0: number, d: number, timeZone: string): number {
  const wall = Date.UTC(y, m0, d);
  let t = wall - offsetMs(wall, timeZone);
  t = wall - offsetMs(t, timeZone);
  return t;
}

/** The site-local calendar day holding atMs, as UTC epoch ms [startMs, endMs) (23 or 25 h long on DST days). */
export function siteDayBounds(atMs: number, timeZone: string): { startMs: number; endMs: number } {
  const local = new Date(atMs + offsetMs(atMs, timeZone));
  const y = local.getUTCFullYear();
  const m0 = local.getUTCMonth();
  const d = local.getUTCDate();
  return { startMs: localMidnightMs(y, m0, d, timeZone), endMs: localMidnightMs(y, m0, d + 1, timeZone) };
}

/** Segments of constant state from state changes; the last one ends at lastTsMs + hold, but not after nowMs. */
function segmentsOf(changes: readonly StateChange[], lastTsMs: number, nowMs: number): Segment[] {
  const out: Segment[] = [];
  for (let i = 0; i < changes.length; i++) {
    const c = changes[i] as StateChange;
    const next = changes[i + 1];
    let endMs: number;
    if (!next) endMs = Math.min(nowMs, lastTsMs + STATE_HOLD_MAX_MS);
    else if (next.prevTsMs !== null && next.tsMs - next.prevTsMs > STATE_HOLD_MAX_MS) endMs = next.prevTsMs + STATE_HOLD_MAX_MS;
    else endMs = next.tsMs;
    const prev = out[out.length - 1];
    out.push({ startMs: c.tsMs, endMs: Math.max(c.tsMs, endMs), compressorOn: c.compressorOn, defrostOn: c.defrostOn, doorOpen: c.doorOpen, joined: prev !== undefined && prev.endMs === c.tsMs });
  }
  return out;
}

/** Start of the current run of `key` (walking back over joined segments), and whether it began before the window. */
function runStart(segs: readonly Segment[], key: 'compressorOn' | 'doorOpen', windowFromMs: number): { sinceMs: number; before: boolean } {
  const at = (k: number) => segs[k] as Segment;
  let i = segs.length - 1;
  const v = at(i)[key];
  while (i > 0 && at(i).joined && at(i - 1)[key] === v) i--;
  const before = i === 0 && at(0).startMs - windowFromMs <= STATE_HOLD_MAX_MS;
  return { sinceMs: before ? windowFromMs : at(i).startMs, before };
}

/** Periods where `key` is true, clipped to [fromMs, toMs), adjacent runs merged. */
function periodsOf(segs: readonly Segment[], key: 'defrostOn' | 'doorOpen', fromMs: number, toMs: number): Array<[number, number]> {
  const out: Array<[number, number]> = [];
  for (const s of segs) {
    if (!s[key]) continue;
    const a = Math.max(s.startMs, fromMs);
    const b = Math.min(s.endMs, toMs);
    if (b <= a) continue;
    const last = out[out.length - 1];
    if (last && last[1] === a) last[1] = b;
    else out.push([a, b]);
  }
  return out;
}

export interface CycleInputs {
  boxId: number;
  nowMs: number;
  windowFromMs: number;
  lastTsMs: number | null;
  timeZone: string;
  defrostIntervalH: number;
}

const isoOf = (ms: number) => new Date(ms).toISOString();

/** The cycle figures from the state changes of a window (times in epoch ms, durations in min). */
export function cycleFigures(changes: readonly StateChange[], inp: CycleInputs): BoxCyclesDto {
  const { nowMs, windowFromMs, lastTsMs } = inp;
  const day = siteDayBounds(nowMs, inp.timeZone);
  const base: BoxCyclesDto = {
    boxId: inp.boxId,
    asOf: isoOf(nowMs),
    windowFrom: isoOf(windowFromMs),
    lastReadingAt: lastTsMs === null ? null : isoOf(lastTsMs),
    current: lastTsMs !== null && nowMs - lastTsMs <= STATE_HOLD_MAX_MS,
    timeZone: inp.timeZone,
    compressor: { on: null, sinceAt: null, sinceBeforeWindow: false, startsLastHour: 0, startsAt: [] },
    defrost: { on: null, lastStartAt: null, lastEndAt: null, lastDurationMin: null, intervalH: inp.defrostIntervalH, nextDueAt: null },
    door: { open: null, sinceAt: null, sinceBeforeWindow: false, openTodayMin: 0, openingsToday: 0, countedUntil: isoOf(nowMs), dayStartAt: isoOf(day.startMs), dayEndAt: isoOf(day.endMs) },
  };
  if (changes.length === 0 || lastTsMs === null) return base;
  const segs = segmentsOf(changes, lastTsMs, nowMs);
  const last = segs[segs.length - 1] as Segment;

  const comp = runStart(segs, 'compressorOn', windowFromMs);
  const startsAt: number[] = [];
  let defrostStart: number | null = null;
  let defrostEnd: number | null = null;
  let lastDurationMin: number | null = null;
  let openings = 0;
  for (let i = 1; i < changes.length; i++) {
    const a = changes[i - 1] as StateChange;
    const b = changes[i] as StateChange;
    if (!a.compressorOn && b.compressorOn && b.tsMs > nowMs - HOUR) startsAt.push(b.tsMs);
    if (!a.defrostOn && b.defrostOn) defrostStart = b.tsMs;
    if (a.defrostOn && !b.defrostOn) {
      defrostEnd = b.tsMs;
      lastDurationMin = defrostStart === null ? null : (b.tsMs - defrostStart) / MIN;
    }
    if (!a.doorOpen && b.doorOpen && b.tsMs >= day.startMs) openings++;
  }
  const door = runStart(segs, 'doorOpen', windowFromMs);
  const openTodayMs = periodsOf(segs, 'doorOpen', day.startMs, nowMs).reduce((s, [a, b]) => s + (b - a), 0);

  return {
    ...base,
    compressor: { on: last.compressorOn, sinceAt: isoOf(comp.sinceMs), sinceBeforeWindow: comp.before, startsLastHour: startsAt.length, startsAt: startsAt.map(isoOf) },
    defrost: {
      on: last.defrostOn,
      lastStartAt: defrostStart === null ? null : isoOf(defrostStart),
      lastEndAt: defrostEnd === null ? null : isoOf(defrostEnd),
      lastDurationMin,
      intervalH: inp.defrostIntervalH,
      nextDueAt: defrostStart === null ? null : isoOf(defrostStart + inp.defrostIntervalH * HOUR),
    },
    door: { ...base.door, open: last.doorOpen, sinceAt: isoOf(door.sinceMs), sinceBeforeWindow: door.before, openTodayMin: openTodayMs / MIN, openingsToday: openings, countedUntil: isoOf(last.endMs) },
  };
}

const parseDbTs = (s: string) => Date.parse(`${s.slice(0, 23).replace(' ', 'T')}Z`);

/** State changes of a box in [fromMs, toMs]: the first reading, every change and every reading after a gap longer than the hold. */
export async function stateChanges(sequelize: Sequelize, boxId: number, fromMs: number, toMs: number): Promise<StateChange[]> {
  const rows = await sequelize.query<{ ts: string; c: number; d: number; o: number; prev: string | null }>(
    `SELECT DATE_FORMAT(ts, '%Y-%m-%d %H:%i:%s.%f') AS ts, c, d, o, DATE_FORMAT(prev_ts, '%Y-%m-%d %H:%i:%s.%f') AS prev FROM (
       SELECT ts, compressor_on AS c, defrost_on AS d, door_open AS o,
              LAG(compressor_on) OVER w AS pc, LAG(defrost_on) OVER w AS pd, LAG(door_open) OVER w AS po, LAG(ts) OVER w AS prev_ts
       FROM readings WHERE box_id = ? AND ts >= ? AND ts <= ? WINDOW w AS (ORDER BY ts)) t
     WHERE prev_ts IS NULL OR pc <> c OR pd <> d OR po <> o OR TIMESTAMPDIFF(MICROSECOND, prev_ts, ts) > ?
     ORDER BY ts`,
    { replacements: [boxId, sqlTs(fromMs), sqlTs(toMs), STATE_HOLD_MAX_MS * 1000], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ tsMs: parseDbTs(r.ts), compressorOn: Number(r.c) === 1, defrostOn: Number(r.d) === 1, doorOpen: Number(r.o) === 1, prevTsMs: r.prev === null ? null : parseDbTs(r.prev) }));
}

async function lastReadingMs(sequelize: Sequelize, boxId: number, fromMs: number, toMs: number): Promise<number | null> {
  const rows = await sequelize.query<{ ts: string | null }>(`SELECT DATE_FORMAT(MAX(ts), '%Y-%m-%d %H:%i:%s.%f') AS ts FROM readings WHERE box_id = ? AND ts >= ? AND ts <= ?`, {
    replacements: [boxId, sqlTs(fromMs), sqlTs(toMs)],
    type: QueryTypes.SELECT,
  });
  return rows[0]?.ts ? parseDbTs(rows[0].ts) : null;
}

/** Defrost and door-open periods of a box within [fromMs, toMs) (ISO pairs), from its raw readings. */
export async function statePeriods(sequelize: Sequelize, boxId: number, fromMs: number, toMs: number): Promise<{ defrost: PeriodIso[]; door: PeriodIso[] }> {
  // Start a hold earlier so a period already running at `from` is seen.
  const changes = await stateChanges(sequelize, boxId, fromMs - STATE_HOLD_MAX_MS, toMs);
  const lastTs = await lastReadingMs(sequelize, boxId, fromMs - STATE_HOLD_MAX_MS, toMs);
  if (changes.length === 0 || lastTs === null) return { defrost: [], door: [] };
  const segs = segmentsOf(changes, lastTs, toMs);
  const iso = (p: [number, number]): PeriodIso => [isoOf(p[0]), isoOf(p[1])];
  return { defrost: periodsOf(segs, 'defrostOn', fromMs, toMs).map(iso), door: periodsOf(segs, 'doorOpen', fromMs, toMs).map(iso) };
}

/** Readings examined for the timers: back to site-local midnight, and two defrost intervals plus an hour (ms). */
export function cycleWindowFromMs(nowMs: number, dayStartMs: number, defrostIntervalH: number): number {
  return Math.min(dayStartMs, nowMs - (2 * defrostIntervalH + 1) * HOUR);
}

/** The cycle timers of a box at nowMs (epoch ms). */
export async function boxCycles(sequelize: Sequelize, box: { id: number; defrostIntervalH: number }, timeZone: string, nowMs: number): Promise<BoxCyclesDto> {
  const windowFromMs = cycleWindowFromMs(nowMs, siteDayBounds(nowMs, timeZone).startMs, box.defrostIntervalH);
  const [changes, lastTs] = await Promise.all([stateChanges(sequelize, box.id, windowFromMs, nowMs), lastReadingMs(sequelize, box.id, windowFromMs, nowMs)]);
  return cycleFigures(changes, { boxId: box.id, nowMs, windowFromMs, lastTsMs: lastTs, timeZone, defrostIntervalH: box.defrostIntervalH });
}

/** GET /boxes/:id/cycles[?from&to] (mounted on /api/v1), tenant-scoped like the readings. */
export function cyclesRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models, sequelize } = ctx;
  r.get('/boxes/:id/cycles', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const box = await models.Box.findOne({ where: { id: parseId(req), ...scopeWhere(user) } });
    if (!box) throw problems.notFound('box');
    const q = parseQuery(CyclesQuery, req);
    const site = await models.Site.findByPk(box.siteId);
    const nowMs = Date.now();
    const dto = await boxCycles(sequelize, box, site?.timeZone ?? 'UTC', nowMs);
    if (q.from && q.to) {
      const fromMs = Date.parse(q.from);
      const toMs = Date.parse(q.to);
      dto.periods = { from: isoOf(fromMs), to: isoOf(toMs), ...(await statePeriods(sequelize, box.id, fromMs, toMs)) };
    }
    res.json(dto);
  });
  return r;
}
