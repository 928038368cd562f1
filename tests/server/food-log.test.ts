/**
 * The food-safety temperature log through the HTTP API against the real database: readings
 * inserted straight into the readings (and 1-minute rollup) tables for a box, the day view with
 * scheduled readings, min/max and excursions with durations, corrective actions, the sign-off
 * after which the day is append-only, corrections, tenant scope, and the CSV and PDF exports.
 * The traces are synthetic; every expected figure is counted by hand from the trace above it.
 */
import { inflateSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { sqlTs } from '../../server/db/sequelize';
import { addDays, localDayBounds, localDayOf } from '../../shared/records/zonedTime';
import { factories, signIn, startTestServer } from './helpers/app';
import { call, expectProblem, expectStatus, type Session } from './helpers/roles';

let srv: RunningServer;
const MIN = 60_000;
const HOUR = 60 * MIN;
const TZ = 'America/Chicago';

let boxId: number;
let siteId: number;
let otherBoxId: number;
let managerA: Session;
let managerB: Session;
let technician: Session;
let admin: Session;
/** A day of raw readings, five days before today at the site (well inside the 90-day raw retention). */
let rawDay: string;
/** The day before it: 1-minute rollups only (as when the raw partition is gone). */
let rollupDay: string;

async function session(role: 'admin' | 'technician' | 'manager', customerId: number | null): Promise<Session> {
  const u = await factories(srv).user(role, customerId);
  const s = await signIn(srv, u.email, u.password);
  return { ...s, userId: u.user.id };
}

/** One raw reading a minute over the local day, at `c(t)` °C. */
async function insertRawDay(box: number, day: string, c: (tMs: number) => number) {
  const { startMs, endMs } = localDayBounds(day, TZ);
  const rows: string[] = [];
  const args: Array<string | number> = [];
  let seq = 1;
  for (let t = startMs; t < endMs; t += MIN) {
    rows.push("(?, ?, ?, ?, 'R-448A', ?, 250, -2, 1, 1, 0, 0)");
    args.push(box, sqlTs(t), seq++, sqlTs(t), c(t));
  }
  for (let i = 0; i < rows.length; i += 500) {
    await srv.ctx.sequelize.query(
      `INSERT INTO readings (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, compressor_on, fan_on, defrost_on, door_open) VALUES ${rows.slice(i, i + 500).join(',')}`,
      { replacements: args.slice(i * 5, (i + 500) * 5) },
    );
  }
}

/** One 1-minute rollup bucket a minute over the local day (6 samples each), mean `c(t)`, min/max ±0.2 K. */
async function insertRollupDay(box: number, day: string, c: (tMs: number) => number) {
  const { startMs, endMs } = localDayBounds(day, TZ);
  const rows: string[] = [];
  const args: Array<string | number> = [];
  for (let t = startMs; t < endMs; t += MIN) {
    const v = c(t);
    rows.push('(?, ?, 6, ?, ?, ?, 0, 0, 0, 0, 1500, 60000, 60000, 0, 0)');
    args.push(box, sqlTs(t).slice(0, 19), v - 0.2, v + 0.2, v * 6);
  }
  for (let i = 0; i < rows.length; i += 500) {
    await srv.ctx.sequelize.query(
      `INSERT INTO readings_1m (box_id, bucket_start, samples, box_air_min_c, box_air_max_c, box_air_sum_c, superheat_sum_k, superheat_n, valve_sum_pct, valve_n, suction_sum_kpa_g, covered_ms, compressor_ms, defrost_ms, door_ms) VALUES ${rows.slice(i, i + 500).join(',')}`,
      { replacements: args.slice(i * 5, (i + 500) * 5) },
    );
  }
}

/** The text shown by a pdfkit PDF: each content stream inflated, the hex strings of its TJ operators decoded (WinAnsi ≈ Latin-1 here). */
function pdfText(pdf: Buffer): string {
  const s = pdf.toString('latin1');
  const parts: string[] = [];
  for (const m of s.matchAll(/stream\r?\n([\s\S]*?)\r?\nendstream/g)) {
    let content: string;
    try {
      content = inflateSync(Buffer.from(m[1] ?? '', 'latin1')).toString('latin1');
    } catch {
      content = m[1] ?? '';
    }
    for (const tj of content.matchAll(/\[(.*?)\]\s*TJ/g)) {
      parts.push([...(tj[1] ?? '').matchAll(/<([0-9a-fA-F]*)>/g)].map((h) => Buffer.from(h[1] ?? '', 'hex').toString('latin1')).join(''));
    }
  }
  return parts.join(' ');
}
const squash = (s: string) => s.replace(/\s+/g, '');
/** PUT as a session, with its CSRF token (the shared call() helper has no PUT). */
const put = (s: Session, url: string, body: object) => s.agent.put(url).set('x-csrf-token', s.csrf).send(body);

beforeAll(async () => {
  srv = await startTestServer();
  const f = factories(srv);
  const a = await f.customer();
  const b = await f.customer();
  const site = await f.site(a.id, { timeZone: TZ });
  siteId = site.id;
  // A cooler at the 5 °C (41 °F) default high limit: FDA Food Code 2022 §3-501.16(A)(2).
  boxId = (await f.box(site.id, a.id, { kind: 'cooler', highLimitC: 5 })).id;
  const siteB = await f.site(b.id, { timeZone: TZ });
  otherBoxId = (await f.box(siteB.id, b.id)).id;
  managerA = await session('manager', a.id);
  managerB = await session('manager', b.id);
  technician = await session('technician', null);
  admin = await session('admin', null);
  rawDay = addDays(localDayOf(Date.now(), TZ), -5);
  rollupDay = addDays(rawDay, -1);
  // Raw day: 3.0 °C, except 7.2 °C from 14:02 local up to (not including) 16:35 local: 153 min above.
  const raw0 = localDayBounds(rawDay, TZ).startMs;
  await insertRawDay(boxId, rawDay, (t) => (t >= raw0 + 14 * HOUR + 2 * MIN && t < raw0 + 16 * HOUR + 35 * MIN ? 7.2 : 3));
  // Rollup day: mean 3.0 °C, except mean 6.0 °C (max 6.2) in the 45 buckets from 09:00 local: 45 min above.
  const roll0 = localDayBounds(rollupDay, TZ).startMs;
  await insertRollupDay(boxId, rollupDay, (t) => (t >= roll0 + 9 * HOUR && t < roll0 + 9 * HOUR + 45 * MIN ? 6 : 3));
}, 60_000);
afterAll(async () => srv.stop());

const logUrl = (box: number, from: string, to: string, suffix = '') => `/api/v1/food-log/boxes/${box}${suffix}?from=${from}&to=${to}`;

describe('the day view', () => {
  it('shows the excursion from raw readings with its start, end and exact duration, and the scheduled readings every 4 h', async () => {
    const res = await call(managerA, 'get', logUrl(boxId, rawDay, rawDay));
    expectStatus(res, 200);
    const day = res.body.days[0];
    expect(day.source).toBe('raw');
    const raw0 = localDayBounds(rawDay, TZ).startMs;
    expect(day.excursions).toHaveLength(1);
    expect(day.excursions[0].start).toBe(new Date(raw0 + 14 * HOUR + 2 * MIN).toISOString());
    expect(day.excursions[0].end).toBe(new Date(raw0 + 16 * HOUR + 35 * MIN).toISOString());
    expect(day.excursions[0].durationMin).toBe(153);
    expect(day.excursions[0].peakC).toBe(7.2);
    expect(day.minC).toBe(3);
    expect(day.maxC).toBe(7.2);
    expect(day.scheduled.map((s: { label: string }) => s.label)).toEqual(['00:00', '04:00', '08:00', '12:00', '16:00', '20:00']);
    expect(day.scheduled.map((s: { boxAirC: number }) => s.boxAirC)).toEqual([3, 3, 3, 3, 7.2, 3]);
    expect(res.body.limitC).toBe(5);
    expect(res.body.limitSource).toContain('FDA Food Code 2022, §3-501.16(A)(2)');
    expect(res.body.statement).toContain('Box air temperature is not product temperature');
    expect(res.body.statement).toContain('local health authority');
  });

  it('uses the 1-minute rollups for a day without raw readings and says so', async () => {
    const res = await call(technician, 'get', logUrl(boxId, rollupDay, rawDay));
    expectStatus(res, 200);
    const [roll, raw] = res.body.days;
    expect(roll.source).toBe('rollup-1m');
    expect(raw.source).toBe('raw');
    expect(roll.excursions.map((e: { durationMin: number }) => e.durationMin)).toEqual([45]);
    expect(roll.maxC).toBeCloseTo(6.2, 9);
  });

  it('follows the site plan: every 6 h after an admin sets it, and refuses an interval that does not divide a day', async () => {
    expectProblem(await put(managerA, `/api/v1/food-log/sites/${siteId}/settings`, { foodLogIntervalH: 6 }), 403, 'forbidden');
    expectProblem(await put(admin, `/api/v1/food-log/sites/${siteId}/settings`, { foodLogIntervalH: 5 }), 400, 'validation');
    expectStatus(await put(admin, `/api/v1/food-log/sites/${siteId}/settings`, { foodLogIntervalH: 6 }), 200);
    const res = await call(managerA, 'get', logUrl(boxId, rawDay, rawDay));
    expect(res.body.intervalH).toBe(6);
    expect(res.body.days[0].scheduled.map((s: { label: string }) => s.label)).toEqual(['00:00', '06:00', '12:00', '18:00']);
    expectStatus(await put(admin, `/api/v1/food-log/sites/${siteId}/settings`, { foodLogIntervalH: 4 }), 200);
  });

  it('leaves out raw readings whose box-air sensor is flagged, counts them, and raises no excursion from them', async () => {
    const day = addDays(rawDay, 2);
    const d0 = localDayBounds(day, TZ).startMs;
    await insertRawDay(boxId, day, () => 3);
    // Five readings of a shorted box-air thermistor (150 °C, flagged by the ingest) at 10:00–10:04 local.
    const flags = JSON.stringify([{ code: 'sensor-shorted', sensor: 'boxAirC', affects: ['boxAirC'], message: 'Box-air sensor shorted' }]);
    await srv.ctx.sequelize.query('UPDATE readings SET box_air_c = 150, quality_flags = ? WHERE box_id = ? AND ts >= ? AND ts < ?', {
      replacements: [flags, boxId, sqlTs(d0 + 10 * HOUR), sqlTs(d0 + 10 * HOUR + 5 * MIN)],
    });
    const res = await call(managerA, 'get', logUrl(boxId, day, day));
    expectStatus(res, 200);
    const d = res.body.days[0];
    expect(d.source).toBe('raw');
    expect(d.doubtedReadings).toBe(5);
    expect(d.maxC).toBe(3);
    expect(d.excursions).toEqual([]);
  });

  it('refuses a period longer than 31 days with a validation problem', async () => {
    expectProblem(await call(managerA, 'get', logUrl(boxId, '2026-01-01', '2026-02-01')), 400, 'validation');
  });
});

describe('entries and sign-off', () => {
  it('a signed day refuses edits and deletes (409) but takes a correction that references the old entry', async () => {
    const created = await call(managerA, 'post', `/api/v1/food-log/boxes/${boxId}/entries`, {
      kind: 'corrective-action',
      day: rawDay,
      text: 'Probed product, moved it to the reach-in; door gasket reported.',
      productProbeC: 6.1,
    });
    expectStatus(created, 201);
    const entryId = created.body.id as number;
    // Before sign-off the author may still fix a typo in place.
    expectStatus(await call(managerA, 'patch', `/api/v1/food-log/entries/${entryId}`, { text: 'Probed product at 6.1 °C, moved it to the reach-in; door gasket reported.' }), 200);
    expectProblem(await call(technician, 'post', `/api/v1/food-log/boxes/${boxId}/sign-off`, { from: rawDay, to: rawDay }), 403, 'forbidden');
    const signed = await call(managerA, 'post', `/api/v1/food-log/boxes/${boxId}/sign-off`, { from: rawDay, to: rawDay });
    expectStatus(signed, 201);
    expectProblem(await call(managerA, 'post', `/api/v1/food-log/boxes/${boxId}/sign-off`, { from: rawDay, to: rawDay }), 409, 'conflict');

    expectProblem(await call(managerA, 'patch', `/api/v1/food-log/entries/${entryId}`, { text: 'changed after sign-off' }), 409, 'conflict');
    expectProblem(await call(admin, 'delete', `/api/v1/food-log/entries/${entryId}`), 409, 'conflict');
    expectProblem(await call(admin, 'patch', `/api/v1/food-log/entries/${signed.body.signed[0].id}`, { text: 'x' }), 409, 'conflict');

    const correction = await call(technician, 'post', `/api/v1/food-log/boxes/${boxId}/entries`, { kind: 'correction', refersToId: entryId, text: 'Product went to the second cooler, not the reach-in.' });
    expectStatus(correction, 201);
    expect(correction.body.refersToId).toBe(entryId);
    expect(correction.body.day).toBe(rawDay);

    const day = (await call(managerA, 'get', logUrl(boxId, rawDay, rawDay))).body.days[0];
    const old = day.entries.find((e: { id: number }) => e.id === entryId);
    expect(old.text).toBe('Probed product at 6.1 °C, moved it to the reach-in; door gasket reported.');
    expect(old.correctedBy).toEqual([correction.body.id]);
    const corr = day.entries.find((e: { id: number }) => e.id === correction.body.id);
    expect(corr.kind).toBe('correction');
    expect(corr.afterSignOff).toBe(true);
    expect(day.signedOff.byName).toBeTruthy();
    const audit = await srv.ctx.models.AuditEntry.findOne({ where: { action: 'food-log.sign-off', entityId: String(boxId) } });
    expect(audit).not.toBeNull();
  });

  it('a weekly sign-off signs each unsigned day and leaves those already signed', async () => {
    const res = await call(admin, 'post', `/api/v1/food-log/boxes/${boxId}/sign-off`, { from: addDays(rawDay, -3), to: rawDay });
    expectStatus(res, 201);
    expect(res.body.signed.map((e: { day: string }) => e.day)).toEqual([addDays(rawDay, -3), addDays(rawDay, -2), addDays(rawDay, -1)]);
    expectProblem(await call(admin, 'post', `/api/v1/food-log/boxes/${boxId}/sign-off`, { from: addDays(rawDay, -7), to: rawDay }), 400, 'validation');
  });

  it('refuses an entry on a day that has not begun at the site', async () => {
    const tomorrow = addDays(localDayOf(Date.now(), TZ), 1);
    expectProblem(await call(managerA, 'post', `/api/v1/food-log/boxes/${boxId}/entries`, { kind: 'note', day: tomorrow, text: 'early' }), 422, 'future-day');
  });
});

describe('tenant scope', () => {
  it("a manager of another customer gets 404 for the box's log, exports, entries and sign-off", async () => {
    expectProblem(await call(managerB, 'get', logUrl(boxId, rawDay, rawDay)), 404, 'not-found');
    expectProblem(await call(managerB, 'get', logUrl(boxId, rawDay, rawDay, '/export.pdf')), 404, 'not-found');
    expectProblem(await call(managerB, 'get', logUrl(boxId, rawDay, rawDay, '/export.csv')), 404, 'not-found');
    expectProblem(await call(managerB, 'post', `/api/v1/food-log/boxes/${boxId}/entries`, { kind: 'note', day: rawDay, text: 'not mine' }), 404, 'not-found');
    expectProblem(await call(managerB, 'post', `/api/v1/food-log/boxes/${boxId}/sign-off`, { from: rawDay, to: rawDay }), 404, 'not-found');
    const entry = await srv.ctx.models.FoodLogEntry.findOne({ where: { boxId } });
    expectProblem(await call(managerB, 'patch', `/api/v1/food-log/entries/${entry?.id}`, { text: 'x' }), 404, 'not-found');
    expectStatus(await call(managerB, 'get', logUrl(otherBoxId, rawDay, rawDay)), 200);
  });
});

describe('exports for an inspector', () => {
  it('the PDF carries the limit, its source, the statement, the excursion and the correction', async () => {
    const res = await call(managerA, 'get', logUrl(boxId, rawDay, rawDay, '/export.pdf')).buffer(true).parse((r, cb) => {
      const chunks: Buffer[] = [];
      r.on('data', (c: Buffer) => chunks.push(c));
      r.on('end', () => cb(null, Buffer.concat(chunks)));
    });
    expectStatus(res, 200);
    expect(res.headers['content-type']).toBe('application/pdf');
    const pdf = res.body as Buffer;
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    const text = squash(pdfText(pdf));
    expect(text).toContain(squash('Limit used: 5.0 °C (41.0 °F)'));
    expect(text).toContain(squash('FDA Food Code 2022, §3-501.16(A)(2)'));
    expect(text).toContain(squash('Box air is not product temperature.'));
    expect(text).toContain(squash('153 min'));
    expect(text).toContain(squash('Product went to the second cooler, not the reach-in.'));
  });

  it('the CSV carries the site, box, period, limit source, the excursion row and the entries', async () => {
    const res = await call(managerA, 'get', logUrl(boxId, rawDay, rawDay, '/export.csv'));
    expectStatus(res, 200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    const csv = res.text;
    expect(csv).toContain(`Period,${rawDay} to ${rawDay}`);
    expect(csv).toContain('FDA Food Code 2022, §3-501.16(A)(2)');
    expect(csv).toContain('Box air temperature is not product temperature');
    const exRow = csv.split('\r\n').find((l) => l.startsWith(`${rawDay},`) && l.includes(',153,'));
    expect(exRow, csv).toBeDefined();
    expect(csv).toContain('correction');
    expect(csv).toContain('sign-off');
  });
});
