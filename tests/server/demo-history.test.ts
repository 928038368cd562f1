import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { loadConfig } from '../../server/config';
import { sqlTs } from '../../server/db/sequelize';
import { convertReading } from '../../server/telemetry/convert';
import { seedDemoHistory, type HistoryConfig, type HistoryResult } from '../../server/seed/history';
import { seedDemo } from '../../server/seed/seed';
import { localTimeMs } from '../../server/seed/historyPlan';
import { factories, startTestServer } from './helpers/app';
import { provisionBox } from './helpers/telemetry';

// A short history (2 days, 3 boxes) seeded once through the worker threads, then checked in SQL.
let srv: RunningServer;
const DAYS = 2;
const INTERVAL_S = 10; // the simulator's default reporting interval (simulator/README.md, --interval)
const COARSE_S = 60; // older days: one reading a minute (historyPlan.ts)
const nowMs = Math.floor(Date.now() / 1000) * 1000;
const fromMs = nowMs - DAYS * 86_400_000;
let boxIds: number[] = [];
let techId = 0;
let first: HistoryResult;

const historyConfig = (days: number): HistoryConfig => ({ ...srv.ctx.config, DEMO_HISTORY_DAYS: days });
/** Epoch ms of a DATETIME as the driver returns it (a Date, or a UTC string). */
const msOf = (v: unknown): number => (v instanceof Date ? v.getTime() : Date.parse(`${String(v).replace(' ', 'T')}Z`));
const q = <T extends object>(sql: string, replacements: unknown[] = []) => srv.ctx.sequelize.query<T>(sql, { replacements, type: QueryTypes.SELECT });

beforeAll(async () => {
  srv = await startTestServer();
  // Two coolers on electronic valves (the door-ajar and the low-charge box) and a freezer, each with its controller.
  const door = await provisionBox(srv, { name: 'History prep cooler' }, { elevationM: 180 });
  const charge = await provisionBox(srv, { name: 'History produce cooler', refrigerant: 'R-513A', setpointC: 3 }, { elevationM: 180 });
  const freezer = await provisionBox(srv, {
    name: 'History freezer', kind: 'freezer', setpointC: -20, differentialK: 2, highLimitC: -12, lowLimitC: -30, alarmDelayMin: 60, superheatTargetK: 3,
    defrostType: 'electric', defrostIntervalH: 6, defrostMaxMin: 40, defrostTerminationC: 10, dripMin: 5, fanDelayMin: 3,
  });
  boxIds = [door.box.id, charge.box.id, freezer.box.id];
  techId = (await factories(srv).user('technician')).user.id;
  first = await seedDemoHistory(historyConfig(DAYS), srv.ctx.sequelize, srv.ctx.models, { nowMs, boxIds, technicianId: techId });
}, 120_000);
afterAll(async () => {
  await srv?.stop();
});

describe('DEMO_HISTORY_DAYS', () => {
  it('defaults to 14 days, to none under NODE_ENV=test, and takes what a test asks for', () => {
    expect(loadConfig({ NODE_ENV: 'development' }).DEMO_HISTORY_DAYS).toBe(14);
    expect(loadConfig({ NODE_ENV: 'test' }).DEMO_HISTORY_DAYS).toBe(0);
    expect(loadConfig({ NODE_ENV: 'test', DEMO_HISTORY_DAYS: '2' }).DEMO_HISTORY_DAYS).toBe(2);
    expect(() => loadConfig({ DEMO_HISTORY_DAYS: '-1' })).toThrow(/DEMO_HISTORY_DAYS/);
  });
});

describe('localTimeMs', () => {
  it('gives the instant of a local wall-clock time the given days back, across a DST change', () => {
    // 2026-03-08 is the US spring-forward day (Energy Policy Act of 2005: second Sunday of March).
    const now = Date.UTC(2026, 2, 10, 18, 0);
    expect(new Date(localTimeMs(now, 'America/Chicago', 3, 20, 40)).toISOString()).toBe('2026-03-08T02:40:00.000Z'); // 20:40 CST (UTC−6) on 7 March
    expect(new Date(localTimeMs(now, 'America/Chicago', 1, 20, 40)).toISOString()).toBe('2026-03-10T01:40:00.000Z'); // 20:40 CDT (UTC−5) on 9 March
  });
});

describe('seedDemoHistory', () => {
  it('stores readings across the whole window: every 10 s over the last day, every minute before, for every box', async () => {
    expect(first.failed).toEqual([]);
    expect(first.boxes.map((b) => b.boxId).sort()).toEqual([...boxIds].sort());
    for (const boxId of boxIds) {
      const [span] = await q<{ n: number; first: string; last: string }>('SELECT COUNT(*) AS n, MIN(ts) AS first, MAX(ts) AS last FROM readings WHERE box_id = ?', [boxId]);
      const gaps = await q<{ recent: number; maxGapMs: number; n: number }>(
        `SELECT recent, MAX(gap) AS maxGapMs, COUNT(*) AS n FROM (
           SELECT ts >= ? AS recent, TIMESTAMPDIFF(MICROSECOND, LAG(ts) OVER (ORDER BY ts), ts) / 1000 AS gap FROM readings WHERE box_id = ?) g
         WHERE gap IS NOT NULL GROUP BY recent ORDER BY recent`,
        // The first gap after the switch to 10-s readings still spans a 60-s step: count from one minute later.
        [sqlTs(nowMs - 86_400_000 + COARSE_S * 1000), boxId],
      );
      const [older, lastDay] = gaps;
      // One reading per interval, plus one at each compressor/fan/defrost/door change.
      expect(Number(lastDay?.n)).toBeGreaterThanOrEqual(86_400 / INTERVAL_S - 1);
      expect(Number(lastDay?.n)).toBeLessThan((2 * 86_400) / INTERVAL_S);
      expect(Number(lastDay?.maxGapMs)).toBeLessThanOrEqual(INTERVAL_S * 1000);
      expect(Number(older?.n)).toBeGreaterThanOrEqual(((DAYS - 1) * 86_400) / COARSE_S);
      expect(Number(older?.maxGapMs)).toBeLessThanOrEqual(COARSE_S * 1000);
      expect(Number(older?.maxGapMs)).toBeGreaterThan(INTERVAL_S * 1000);
      expect(msOf(span?.first) - fromMs).toBeLessThan(COARSE_S * 1000);
      expect(nowMs - msOf(span?.last)).toBeLessThanOrEqual(INTERVAL_S * 1000);
      const [latest] = await q<{ ts: string }>('SELECT ts FROM box_latest WHERE box_id = ?', [boxId]);
      expect(msOf(latest?.ts)).toBe(msOf(span?.last));
    }
  });

  it('stores the saturated suction and superheat the ingest conversion gives for the same reading', async () => {
    const boxId = boxIds[1] as number;
    const rows = await q<{ ts: string; seq: number; suction_kpa_g: number; suction_line_c: number; box_air_c: number; saturated_suction_c: number; superheat_k: number; valve_steps: number; valve_percent: number }>(
      'SELECT ts, seq, suction_kpa_g, suction_line_c, box_air_c, saturated_suction_c, superheat_k, valve_steps, valve_percent FROM readings WHERE box_id = ? AND compressor_on = 1 ORDER BY ts LIMIT 3 OFFSET 500',
      [boxId],
    );
    expect(rows).toHaveLength(3);
    for (const r of rows) {
      const again = convertReading(
        { seq: Number(r.seq), ts: new Date(`${r.ts}Z`).toISOString(), suctionKPaG: r.suction_kpa_g, suctionLineC: r.suction_line_c, boxAirC: r.box_air_c, valveSteps: r.valve_steps, compressorOn: true, fanOn: true, defrostOn: false, doorOpen: false },
        { boxId, customerId: 0, controllerId: 0, serial: 'x', refrigerant: 'R-513A', saturationMethod: 'pressure', valveType: 'eev', elevationM: 180, valveFullSteps: 1600, disabled: false },
      );
      expect(r.saturated_suction_c).toBe(again.saturatedSuctionC);
      expect(r.superheat_k).toBe(again.superheatK);
      expect(r.valve_percent).toBe(again.valvePercent);
    }
  });

  it('stores rollups that match the raw readings of their bucket (count, min, max, and the total count)', async () => {
    const boxId = boxIds[0] as number;
    const bucketStart = sqlTs(Math.floor((fromMs + 86_400_000) / 900_000) * 900_000).slice(0, 19);
    for (const [table, bucketMs] of [['readings_1m', 60_000], ['readings_15m', 900_000], ['readings_1h', 3_600_000]] as const) {
      const start = sqlTs(Math.floor(msOf(bucketStart) / bucketMs) * bucketMs);
      const end = sqlTs(msOf(start) + bucketMs);
      const [raw] = await q<{ n: number; lo: number; hi: number }>('SELECT COUNT(*) AS n, MIN(box_air_c) AS lo, MAX(box_air_c) AS hi FROM readings WHERE box_id = ? AND ts >= ? AND ts < ?', [boxId, start, end]);
      const [roll] = await q<{ samples: number; lo: number; hi: number }>(`SELECT samples, box_air_min_c AS lo, box_air_max_c AS hi FROM ${table} WHERE box_id = ? AND bucket_start = ?`, [boxId, start.slice(0, 19)]);
      expect(Number(raw?.n)).toBeGreaterThan(0);
      expect(Number(roll?.samples)).toBe(Number(raw?.n));
      expect(roll?.lo).toBe(raw?.lo);
      expect(roll?.hi).toBe(raw?.hi);
    }
    const [total] = await q<{ raw: number; hourly: number }>('SELECT (SELECT COUNT(*) FROM readings WHERE box_id = ?) AS raw, (SELECT SUM(samples) FROM readings_1h WHERE box_id = ?) AS hourly', [boxId, boxId]);
    expect(Number(total?.hourly)).toBe(Number(total?.raw));
  });

  it('puts the daily partitions of the window in place (no history row in the catch-all partition)', async () => {
    const [p] = await q<{ rows: number }>("SELECT COUNT(*) AS `rows` FROM readings PARTITION (pmax)");
    expect(Number(p?.rows)).toBe(0);
  });

  it('shows the defrosts at the times of the box schedule, one every defrost interval', async () => {
    const freezerId = boxIds[2] as number;
    // The box's own setting: defrostIntervalH = 6 h.
    const starts = await q<{ ts: string }>(
      'SELECT ts FROM (SELECT ts, defrost_on, LAG(defrost_on) OVER (ORDER BY ts) AS prev FROM readings WHERE box_id = ?) r WHERE defrost_on = 1 AND prev = 0 ORDER BY ts',
      [freezerId],
    );
    const startsMs = starts.map((s) => msOf(s.ts));
    expect(startsMs.length).toBeGreaterThanOrEqual(7); // 48 h / 6 h, less one at an edge of the window
    for (let i = 1; i < startsMs.length; i++) expect((startsMs[i] as number) - (startsMs[i - 1] as number)).toBe(6 * 3_600_000);
    const modelStarts = first.boxes.find((b) => b.boxId === freezerId)?.defrostStartsMs ?? [];
    expect(modelStarts.slice(0, startsMs.length)).toEqual(startsMs.slice(0, modelStarts.length));
  });

  it('stores the door left ajar as a door-open alarm, acknowledged by the technician with a note, then cleared', async () => {
    const doorBox = boxIds[0] as number;
    const alarms = await q<{ id: number; state: string; raised_at: string; acknowledged_by: number; cleared_at: string | null }>(
      "SELECT id, state, raised_at, acknowledged_by, cleared_at FROM alarms WHERE box_id = ? AND rule_id = 'door-open' ORDER BY id",
      [doorBox],
    );
    const ajar = alarms.find((a) => a.cleared_at !== null && a.acknowledged_by === techId);
    expect(ajar).toBeDefined();
    expect(ajar?.state).toBe('normal');
    // Raised by the rule: the door reads open through the box's door alarm delay (5 min) before the raise (readings every 10 or 60 s).
    const raisedMs = msOf(ajar?.raised_at);
    const before = await q<{ n: number; open: number }>('SELECT COUNT(*) AS n, SUM(door_open) AS open FROM readings WHERE box_id = ? AND ts >= ? AND ts <= ?', [doorBox, sqlTs(raisedMs - 5 * 60_000), sqlTs(raisedMs)]);
    expect(Number(before[0]?.n)).toBeGreaterThanOrEqual(5);
    expect(Number(before[0]?.open)).toBe(Number(before[0]?.n));
    // One evening at the site: the door was left ajar at 20:40 local (the plan), so the raise reads 20:45 in the site's zone.
    const local = new Intl.DateTimeFormat('en-GB', { timeZone: 'America/Chicago', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }).format(new Date(raisedMs));
    expect(['20:45', '20:46']).toContain(local);
    const transitions = await q<{ action: string; from_state: string; to_state: string; user_id: number | null; note: string | null }>(
      'SELECT action, from_state, to_state, user_id, note FROM alarm_transitions WHERE alarm_id = ? ORDER BY at, id',
      [ajar?.id],
    );
    expect(transitions.map((t) => [t.action, t.from_state, t.to_state])).toEqual([
      ['raise', 'normal', 'unacknowledged'],
      ['ack', 'unacknowledged', 'acknowledged'],
      ['clear', 'acknowledged', 'normal'],
    ]);
    expect(transitions[1]?.user_id).toBe(techId);
    expect(transitions[1]?.note).toMatch(/door/i);
  });

  it('stores the low-charge episode with its alarms acknowledged by the technician', async () => {
    const chargeBox = boxIds[1] as number;
    const alarms = await q<{ rule_id: string; state: string; acknowledged_by: number | null }>('SELECT rule_id, state, acknowledged_by FROM alarms WHERE box_id = ?', [chargeBox]);
    expect(alarms.length).toBeGreaterThan(0);
    const acks = await q<{ note: string }>("SELECT t.note FROM alarm_transitions t JOIN alarms a ON a.id = t.alarm_id WHERE a.box_id = ? AND t.action = 'ack'", [chargeBox]);
    expect(acks.some((a) => /charge/i.test(a.note))).toBe(true);
  });

  it('seeds nothing on a second run: every box already has its history', async () => {
    const [before] = await q<{ n: number; a: number }>('SELECT (SELECT COUNT(*) FROM readings) AS n, (SELECT COUNT(*) FROM alarms) AS a');
    const again = await seedDemoHistory(historyConfig(DAYS), srv.ctx.sequelize, srv.ctx.models, { nowMs: nowMs + 60_000, boxIds, technicianId: techId });
    const [after] = await q<{ n: number; a: number }>('SELECT (SELECT COUNT(*) FROM readings) AS n, (SELECT COUNT(*) FROM alarms) AS a');
    expect(again.boxes).toEqual([]);
    expect(again.skipped).toBe(boxIds.length);
    expect(after).toEqual(before);
  });

  it('seeds nothing with DEMO_HISTORY_DAYS=0', async () => {
    const none = await seedDemoHistory(historyConfig(0), srv.ctx.sequelize, srv.ctx.models, { boxIds });
    expect(none.boxes).toEqual([]);
    expect(none.skipped).toBe(0);
  });
});

// By hand, not a timed test: DEMO_HISTORY_MEASURE=1 SKIP_BUILD=1 npm test -- tests/server/demo-history.test.ts
describe.runIf(process.env.DEMO_HISTORY_MEASURE === '1')('the full demo history (measured by hand)', () => {
  it('seeds 14 days of every demo box and prints how long it took', async () => {
    await seedDemo(srv.ctx.sequelize, srv.ctx.models, path.join(os.tmpdir(), `rimehold-measure-fleet-${process.pid}.json`));
    const r = await seedDemoHistory(historyConfig(14), srv.ctx.sequelize, srv.ctx.models, { log: (l) => console.log(l) });
    const sum = (k: 'generateMs' | 'waitMs') => +(r.boxes.reduce((t, x) => t + x[k], 0) / 1000).toFixed(1);
    console.log(JSON.stringify({ boxes: r.boxes.length, readings: r.readings, alarms: r.alarms, seconds: +(r.elapsedMs / 1000).toFixed(1), generateCpuS: sum('generateMs'), dbWaitS: sum('waitMs'), failed: r.failed }));
    expect(r.failed).toEqual([]);
  }, 600_000);
});
