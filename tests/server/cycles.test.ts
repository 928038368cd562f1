/**
 * Cycle timers from stored readings (server/telemetry/cycles.ts): compressor run and off time,
 * starts in the last hour, the last defrost and the next by the interval, door-open time today on
 * the site-local day, and the endpoint's tenant scope. The traces are synthetic; every expected
 * figure is counted by hand from the trace described above it.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { boxCycles, siteDayBounds } from '../../server/telemetry/cycles';
import { sqlTs } from '../../server/db/sequelize';
import { factories, signIn, startTestServer } from './helpers/app';

let srv: RunningServer;
beforeAll(async () => {
  srv = await startTestServer();
});
afterAll(async () => srv.stop());

const MIN = 60_000;
const HOUR = 60 * MIN;

interface State {
  compressorOn: boolean;
  defrostOn: boolean;
  doorOpen: boolean;
}

/** Inserts one reading per step from fromMs (inclusive) to toMs (inclusive) with the states of `at(t)`. */
async function insertTrace(boxId: number, fromMs: number, toMs: number, stepMs: number, at: (tMs: number) => State) {
  const rows: string[] = [];
  const args: Array<string | number> = [];
  let seq = 1;
  for (let t = fromMs; t <= toMs; t += stepMs) {
    const s = at(t);
    rows.push("(?, ?, ?, ?, 'R-448A', 2, 250, -2, ?, 1, ?, ?)");
    args.push(boxId, sqlTs(t), seq++, sqlTs(t), s.compressorOn ? 1 : 0, s.defrostOn ? 1 : 0, s.doorOpen ? 1 : 0);
  }
  for (let i = 0; i < rows.length; i += 500) {
    await srv.ctx.sequelize.query(
      `INSERT INTO readings (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, compressor_on, fan_on, defrost_on, door_open) VALUES ${rows.slice(i, i + 500).join(',')}`,
      { replacements: args.slice(i * 7, (i + 500) * 7) },
    );
  }
}

const within = (t: number, a: number, b: number) => t >= a && t < b;

async function newBox(timeZone: string) {
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id, { timeZone });
  const box = await f.box(site.id, customer.id, { defrostIntervalH: 6 });
  return { customer, site, box };
}

describe('site-local day', () => {
  it('starts the Chicago day at 06:00 UTC in December', () => {
    // America/Chicago keeps CST (UTC−6) in December (IANA time zone database, America/Chicago rules).
    const d = siteDayBounds(Date.parse('2026-12-03T05:59:00Z'), 'America/Chicago');
    expect(new Date(d.startMs).toISOString()).toBe('2026-12-02T06:00:00.000Z');
    expect(new Date(d.endMs).toISOString()).toBe('2026-12-03T06:00:00.000Z');
  });

  it('gives a 23-hour day on the spring-forward Sunday', () => {
    // US daylight time begins on the second Sunday of March, 8 March 2026 (IANA tz database, US rules).
    const d = siteDayBounds(Date.parse('2026-03-08T18:00:00Z'), 'America/Chicago');
    expect(new Date(d.startMs).toISOString()).toBe('2026-03-08T06:00:00.000Z');
    expect((d.endMs - d.startMs) / HOUR).toBe(23);
  });
});

describe('cycle timers from a synthetic trace', () => {
  // N = 06:30 UTC on 3 December 2026 = 00:30 in Chicago; the site-local day began 30 min ago.
  const N = Date.parse('2026-12-03T06:30:00.000Z');
  // One reading a minute from N − 14 h to N − 1 min. States of the trace (hand-written):
  //   defrost 19:30–20:00 UTC (N − 11 h) and 01:30–02:00 UTC (N − 5 h), compressor off in both;
  //   compressor otherwise on until N − 55 min, then on in [N−50, N−40), [N−30, N−20), [N−12, now);
  //   door open [N−40, N−20) = 05:50–06:10 UTC (across local midnight) and [N−10, N−5).
  const at = (t: number): State => {
    const defrostOn = within(t, N - 11 * HOUR, N - 11 * HOUR + 30 * MIN) || within(t, N - 5 * HOUR, N - 5 * HOUR + 30 * MIN);
    const onAfter = within(t, N - 50 * MIN, N - 40 * MIN) || within(t, N - 30 * MIN, N - 20 * MIN) || t >= N - 12 * MIN;
    const compressorOn = !defrostOn && (t < N - 55 * MIN || onAfter);
    const doorOpen = within(t, N - 40 * MIN, N - 20 * MIN) || within(t, N - 10 * MIN, N - 5 * MIN);
    return { compressorOn, defrostOn, doorOpen };
  };
  let boxId = 0;
  beforeAll(async () => {
    const { box } = await newBox('America/Chicago');
    boxId = box.id;
    await insertTrace(boxId, N - 14 * HOUR, N - MIN, MIN, at);
  });
  const cyclesAt = (nowMs: number) => boxCycles(srv.ctx.sequelize, { id: boxId, defrostIntervalH: 6 }, 'America/Chicago', nowMs);

  it('times the current compressor run from its start and counts the starts of the last hour', async () => {
    const c = await cyclesAt(N);
    expect(c.current).toBe(true);
    expect(c.compressor.on).toBe(true);
    // Running since N − 12 min: 06:18 UTC.
    expect(c.compressor.sinceAt).toBe('2026-12-03T06:18:00.000Z');
    // Starts at N − 50, N − 30 and N − 12 min; the run that began at 02:00 is older than an hour.
    expect(c.compressor.startsLastHour).toBe(3);
    expect(c.compressor.startsAt).toEqual(['2026-12-03T05:40:00.000Z', '2026-12-03T06:00:00.000Z', '2026-12-03T06:18:00.000Z']);
  });

  it('times the off period when the compressor is off', async () => {
    // At N − 15 min the compressor has been off since N − 20 min; starts in the hour before: N − 50 and N − 30.
    const c = await cyclesAt(N - 15 * MIN);
    expect(c.compressor.on).toBe(false);
    expect(c.compressor.sinceAt).toBe('2026-12-03T06:10:00.000Z');
    expect(c.compressor.startsLastHour).toBe(2);
  });

  it('finds the last defrost, its length, and the next one an interval after its start', async () => {
    const c = await cyclesAt(N);
    expect(c.defrost.on).toBe(false);
    expect(c.defrost.lastStartAt).toBe('2026-12-03T01:30:00.000Z');
    expect(c.defrost.lastEndAt).toBe('2026-12-03T02:00:00.000Z');
    expect(c.defrost.lastDurationMin).toBe(30);
    // 01:30 + the box's 6 h interval.
    expect(c.defrost.nextDueAt).toBe('2026-12-03T07:30:00.000Z');
  });

  it('counts door-open time only since site-local midnight, splitting an opening that spans it', async () => {
    const c = await cyclesAt(N);
    expect(c.door.dayStartAt).toBe('2026-12-03T06:00:00.000Z');
    // 06:00–06:10 of the opening that began at 05:50, plus 06:20–06:25: 10 + 5 = 15 min.
    expect(c.door.openTodayMin).toBeCloseTo(15, 9);
    // Only the opening at 06:20 began today.
    expect(c.door.openingsToday).toBe(1);
    expect(c.door.open).toBe(false);
    expect(c.door.sinceAt).toBe('2026-12-03T06:25:00.000Z');
  });

  it('keeps counting an open door until now while the readings are current', async () => {
    // At N − 7 min the door has stood open since N − 10 min: 10 min (05:50 opening) + 3 min today.
    const c = await cyclesAt(N - 7 * MIN);
    expect(c.door.open).toBe(true);
    expect(c.door.sinceAt).toBe('2026-12-03T06:20:00.000Z');
    expect(c.door.openTodayMin).toBeCloseTo(13, 9);
  });

  it('says nothing is scheduled when no defrost start was seen', async () => {
    const { box } = await newBox('UTC');
    const t0 = Date.parse('2026-11-20T10:00:00.000Z');
    await insertTrace(box.id, t0 - 2 * HOUR, t0 - MIN, MIN, () => ({ compressorOn: true, defrostOn: false, doorOpen: false }));
    const c = await boxCycles(srv.ctx.sequelize, { id: box.id, defrostIntervalH: 6 }, 'UTC', t0);
    expect(c.defrost.lastStartAt).toBeNull();
    expect(c.defrost.nextDueAt).toBeNull();
    // The run began with the first reading, inside the window.
    expect(c.compressor.sinceAt).toBe('2026-11-20T08:00:00.000Z');
    expect(c.compressor.sinceBeforeWindow).toBe(false);
  });

  it('does not carry a state across a gap in the readings', async () => {
    const { box } = await newBox('UTC');
    const t0 = Date.parse('2026-11-21T12:00:00.000Z');
    // Door open from 10:00 to 10:30 with a reading a minute, then nothing until 11:30 (controller away), door closed after.
    await insertTrace(box.id, t0 - 2 * HOUR, t0 - 90 * MIN, MIN, () => ({ compressorOn: true, defrostOn: false, doorOpen: true }));
    await insertTrace(box.id, t0 - 30 * MIN, t0 - MIN, MIN, () => ({ compressorOn: true, defrostOn: false, doorOpen: false }));
    const c = await boxCycles(srv.ctx.sequelize, { id: box.id, defrostIntervalH: 6 }, 'UTC', t0);
    // Last open reading 10:30 holds 5 min (STATE_HOLD_MAX_MS): 10:00–10:35 = 35 min, not 90.
    expect(c.door.openTodayMin).toBeCloseTo(35, 9);
    // The compressor run is only known since the first reading after the gap.
    expect(c.compressor.sinceAt).toBe('2026-11-21T11:30:00.000Z');
  });
});

describe('GET /boxes/:id/cycles', () => {
  it('answers the timers of a visible box, with the shaded periods of a span', async () => {
    const { box } = await newBox('America/Chicago');
    const now = Math.floor(Date.now() / 1000) * 1000;
    const start = now - 20 * MIN;
    await insertTrace(box.id, start, now - 10_000, 10_000, (t) => ({ compressorOn: t >= now - 5 * MIN, defrostOn: false, doorOpen: within(t, now - 15 * MIN, now - 12 * MIN) }));
    const tech = await factories(srv).user('technician');
    const { agent } = await signIn(srv, tech.email, tech.password);
    const res = await agent.get(`/api/v1/boxes/${box.id}/cycles`).query({ from: new Date(start).toISOString(), to: new Date(now).toISOString() }).expect(200);
    // The site's own zone decides "today".
    expect(res.body.timeZone).toBe('America/Chicago');
    expect(res.body.door.dayStartAt).toBe(new Date(siteDayBounds(now, 'America/Chicago').startMs).toISOString());
    expect(res.body.compressor.on).toBe(true);
    expect(res.body.compressor.sinceAt).toBe(new Date(now - 5 * MIN).toISOString());
    expect(res.body.door.open).toBe(false);
    expect(res.body.periods.door).toEqual([[new Date(now - 15 * MIN).toISOString(), new Date(now - 12 * MIN).toISOString()]]);
    expect(res.body.periods.defrost).toEqual([]);
  });

  it('answers 404 for another customer’s box and a problem for half a span', async () => {
    const { box } = await newBox('UTC');
    const other = await factories(srv).customer();
    const mgr = await factories(srv).user('manager', other.id);
    const { agent } = await signIn(srv, mgr.email, mgr.password);
    await agent.get(`/api/v1/boxes/${box.id}/cycles`).expect(404);
    const tech = await factories(srv).user('technician');
    const t = await signIn(srv, tech.email, tech.password);
    const bad = await t.agent.get(`/api/v1/boxes/${box.id}/cycles`).query({ from: new Date().toISOString() }).expect(400);
    expect(bad.headers['content-type']).toContain('application/problem+json');
    expect(bad.body.errors.to).toBeDefined();
  });
});
