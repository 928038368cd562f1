import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import type { Box } from '../../server/models';
import { sqlTs } from '../../server/db/sequelize';
import { factories, signIn, startTestServer } from './helpers/app';
import { call, expectProblem, signInRoles, type Session, type Sessions } from './helpers/roles';
import { lastFullIsoWeek } from '../../shared/records/trends';

let srv: RunningServer;
let s: Sessions;
let otherManager: Session;
let siteId: number;
let boxA: Box;
let boxB: Box;

const MIN = 60_000;
const Q = 15 * MIN;
// 2026-W47 in Europe/Berlin starts Monday 2026-11-16 00:00 CET = 2026-11-15 23:00 UTC.
const W47 = Date.UTC(2026, 10, 15, 23);
const W46 = W47 - 7 * 24 * 3_600_000;

/** Inserts one day (96 quarter-hours + 24 hours) of rollups from startMs: box air 2 °C, except `hotQuarters` at 8 °C. */
async function insertDay(boxId: number, startMs: number, o: { hotQuarters: number[]; compressorMinPerQuarter: number }): Promise<void> {
  const q = (table: string, t: number, air: number, spanMs: number, compMs: number) =>
    srv.ctx.sequelize.query(
      `INSERT INTO ${table} (box_id, bucket_start, samples, box_air_min_c, box_air_max_c, box_air_sum_c, superheat_sum_k, superheat_n, valve_sum_pct, valve_n, suction_sum_kpa_g, covered_ms, compressor_ms, defrost_ms, door_ms)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, 0, 0)`,
      { replacements: [boxId, sqlTs(t).slice(0, 19), spanMs / 10_000, air - 0.5, air + 0.5, (air * spanMs) / 10_000, (4 * spanMs) / 10_000, spanMs / 10_000, (50 * spanMs) / 10_000, spanMs / 10_000, (300 * spanMs) / 10_000, spanMs, compMs], type: QueryTypes.INSERT },
    );
  for (let i = 0; i < 96; i++) await q('readings_15m', startMs + i * Q, o.hotQuarters.includes(i) ? 8 : 2, Q, o.compressorMinPerQuarter * MIN);
  for (let h = 0; h < 24; h++) await q('readings_1h', startMs + h * 4 * Q, 2, 4 * Q, 4 * o.compressorMinPerQuarter * MIN);
}

/** Raw readings every minute over [fromMs, toMs), in defrost within [defFrom, defTo). */
async function insertRaw(boxId: number, fromMs: number, toMs: number, defFrom: number, defTo: number, o: { superheatK: number; valvePercent: number } = { superheatK: 4, valvePercent: 50 }): Promise<void> {
  let seq = 1;
  for (let t = fromMs; t < toMs; t += MIN) {
    const d = t >= defFrom && t < defTo ? 1 : 0;
    await srv.ctx.sequelize.query(
      `INSERT INTO readings (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, superheat_k, valve_percent, compressor_on, fan_on, defrost_on, door_open) VALUES (?, ?, ?, ?, 'R-448A', 2, 300, 0, ?, ?, ?, 1, ?, 0)`,
      { replacements: [boxId, sqlTs(t), seq++, sqlTs(t), o.superheatK, o.valvePercent, d ? 0 : 1, d], type: QueryTypes.INSERT },
    );
  }
}

beforeAll(async () => {
  srv = await startTestServer();
  const f = factories(srv);
  const customer = await f.customer();
  const other = await f.customer();
  s = await signInRoles(srv, customer.id);
  const om = await f.user('manager', other.id);
  otherManager = { ...(await signIn(srv, om.email, om.password)), userId: om.user.id };
  const site = await f.site(customer.id, { timeZone: 'Europe/Berlin' });
  siteId = site.id;
  boxA = await f.box(site.id, customer.id, { highLimitC: 5, lowLimitC: 0 });
  boxB = await f.box(site.id, customer.id, { highLimitC: 5, lowLimitC: 0 });
  // Box A, Monday of W47: quarters 40–43 (10:00–11:00 local) at 8 °C; compressor 10 of 15 min.
  await insertDay(boxA.id, W47, { hotQuarters: [40, 41, 42, 43], compressorMinPerQuarter: 10 });
  // Box A, Monday of W46: all in range; compressor 5 of 15 min.
  await insertDay(boxA.id, W46, { hotQuarters: [], compressorMinPerQuarter: 5 });
  await insertDay(boxB.id, W47, { hotQuarters: [], compressorMinPerQuarter: 5 });
  await insertDay(boxB.id, W46, { hotQuarters: [], compressorMinPerQuarter: 5 });
  // A defrost on box A from 06:10 to 06:40 local (05:10–05:40 UTC) in raw readings.
  await insertRaw(boxA.id, W47 + 6 * 60 * MIN, W47 + 7 * 60 * MIN, W47 + 6 * 60 * MIN + 10 * MIN, W47 + 6 * 60 * MIN + 40 * MIN);
  // Box B, Tuesday 02:00–06:00 local: running with 12 K superheat and the valve at 95 % (no defrost).
  await insertRaw(boxB.id, W47 + 26 * 60 * MIN, W47 + 30 * 60 * MIN, 0, 0, { superheatK: 12, valvePercent: 95 });
  const raised = new Date(W47 + 10 * 60 * MIN);
  await srv.ctx.models.Alarm.create({
    boxId: boxA.id,
    siteId: site.id,
    customerId: customer.id,
    ruleId: 'box-air-high',
    priority: 'high',
    state: 'acknowledged',
    conditionActive: false,
    value: 8,
    message: 'Box air 8.0 °C above 5.0 °C',
    raisedAt: raised,
    clearedAt: new Date(raised.getTime() + 60 * MIN),
    acknowledgedAt: new Date(raised.getTime() + 25 * MIN),
    acknowledgedBy: s.admin.userId,
    shelvedUntil: null,
    nextEscalationAt: null,
  });
});
afterAll(async () => {
  await srv.stop();
});

describe('GET /api/v1/trends/boxes/:id', () => {
  it('answers the week from the rollup rows with the hand-computed summary', async () => {
    const res = await call(s.technician, 'get', `/api/v1/trends/boxes/${boxA.id}?week=2026-W47`);
    expect(res.status, res.text).toBe(200);
    const t = res.body;
    expect(t.week).toMatchObject({ week: '2026-W47', from: '2026-11-15T23:00:00.000Z', hours: 168, timeZone: 'Europe/Berlin' });
    // covered: 96 quarters × 15 min = 1,440 min; in range 92 / 96 = 95.83 % → 95.8 %; above: 4 × 15 = 60 min
    expect(t.summary).toMatchObject({ coveredMin: 1440, timeInRangePercent: 95.8, minutesAboveLimit: 60, excursionCount: 1, longestExcursionMin: 60 });
    // duty 10 / 15 = 66.7 %, the week before 5 / 15 = 33.3 %
    expect(t.summary.compressorDutyPercent).toBe(66.7);
    expect(t.previousSummary.compressorDutyPercent).toBe(33.3);
    // one alarm, acknowledged after 25 min
    expect(t.summary).toMatchObject({ alarmCount: 1, alarmsByRule: { 'box-air-high': 1 }, acknowledgedCount: 1, meanTimeToAckMin: 25 });
    // the raw readings give one 30-min defrost on Monday
    expect(t.days[0]).toMatchObject({ day: '2026-11-16', defrostCount: 1, defrostMeanMin: 30, minutesAboveLimit: 60 });
    expect(t.hours).toHaveLength(24);
    expect(t.previousHours).toHaveLength(24);
    // +33.4 points is above our 15-point threshold
    expect(t.findings.map((f: { id: string }) => f.id)).toEqual(['duty-rising']);
  });

  it('defaults to the last full week in the site zone', async () => {
    const res = await call(s.admin, 'get', `/api/v1/trends/boxes/${boxB.id}`);
    expect(res.status, res.text).toBe(200);
    expect(res.body.week.week).toBe(lastFullIsoWeek(Date.now(), 'Europe/Berlin'));
  });

  it('lets a manager of the box’s customer read it and answers 404 to a manager of another customer', async () => {
    expect((await call(s.manager, 'get', `/api/v1/trends/boxes/${boxA.id}?week=2026-W47`)).status).toBe(200);
    expectProblem(await call(otherManager, 'get', `/api/v1/trends/boxes/${boxA.id}?week=2026-W47`), 404, 'not-found');
    expectProblem(await call(otherManager, 'get', `/api/v1/trends/boxes/${boxA.id}/export.csv?week=2026-W47`), 404, 'not-found');
  });

  it('refuses a malformed week and a week 53 the year lacks with a problem', async () => {
    expectProblem(await call(s.admin, 'get', `/api/v1/trends/boxes/${boxA.id}?week=2026-47`), 400, 'validation');
    expectProblem(await call(s.admin, 'get', `/api/v1/trends/boxes/${boxA.id}?week=2025-W53`), 400, 'bad-request');
  });

  it('answers 401 without a sign-in', async () => {
    expectProblem(await call(s.anonymous, 'get', `/api/v1/trends/boxes/${boxA.id}`), 401);
  });
});

describe('the superheat finding from raw readings', () => {
  it('raises high superheat with the valve near open from the hours the compressor ran', async () => {
    const res = await call(s.admin, 'get', `/api/v1/trends/boxes/${boxB.id}?week=2026-W47`);
    expect(res.status, res.text).toBe(200);
    // 4 h of 12 K > target 3.3 K + 5 K band (shared/rules/defaults, our choice), valve 95 % ≥ 90 % (common practice)
    expect(res.body.findings).toEqual([expect.objectContaining({ id: 'superheat-high-valve-open', figures: expect.objectContaining({ hours: 4, superheatMeanK: 12, valveMeanPercent: 95 }) })]);
    // every 1 h rollup of box B holds 4 K and 50 % (and none covers Tuesday): the finding came from the raw readings
    expect(res.body.hours.every((h: { superheatMeanK: number; valveMeanPercent: number }) => h.superheatMeanK === 4 && h.valveMeanPercent === 50)).toBe(true);
  });
});

describe('GET /api/v1/trends/boxes/:id/export.csv', () => {
  it('exports one row per local day with the daily figures', async () => {
    const res = await call(s.admin, 'get', `/api/v1/trends/boxes/${boxA.id}/export.csv?week=2026-W47`);
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/text\/csv/);
    const lines = res.text.trim().split('\r\n');
    expect(lines).toHaveLength(8);
    const head = (lines[0] ?? '').split(',');
    const monday = (lines[1] ?? '').split(',');
    const col = (name: string) => monday[head.indexOf(name)];
    expect(col('day')).toBe('2026-11-16');
    expect(col('minutes_above_limit')).toBe('60');
    expect(col('time_in_range_pct')).toBe('95.8');
    expect(col('defrost_count')).toBe('1');
  });
});

describe('GET /api/v1/trends/sites/:id', () => {
  it('sums the site’s boxes and lists every box’s findings', async () => {
    const res = await call(s.manager, 'get', `/api/v1/trends/sites/${siteId}?week=2026-W47`);
    expect(res.status, res.text).toBe(200);
    expect(res.body.boxes).toHaveLength(2);
    // 60 min above on box A + 0 on box B; in range (92 + 96) / 192 = 97.92 % → 97.9 %
    expect(res.body.summary).toMatchObject({ minutesAboveLimit: 60, coveredMin: 2880, timeInRangePercent: 97.9, alarmCount: 1, meanTimeToAckMin: 25 });
    expect(res.body.findings).toEqual([expect.objectContaining({ id: 'duty-rising', boxId: boxA.id }), expect.objectContaining({ id: 'superheat-high-valve-open', boxId: boxB.id })]);
  });

  it('answers 404 to a manager of another customer', async () => {
    expectProblem(await call(otherManager, 'get', `/api/v1/trends/sites/${siteId}?week=2026-W47`), 404, 'not-found');
  });

  it('exports both boxes’ days as CSV', async () => {
    const res = await call(s.admin, 'get', `/api/v1/trends/sites/${siteId}/export.csv?week=2026-W47`);
    expect(res.status).toBe(200);
    expect(res.text.trim().split('\r\n')).toHaveLength(1 + 2 * 7);
  });
});
