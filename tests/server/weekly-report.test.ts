import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import type { MailMessage } from '../../server/mail/mailer';
import type { Site } from '../../server/models';
import { sqlTs } from '../../server/db/sequelize';
import { factories, startTestServer } from './helpers/app';
import { call, expectProblem, signInRoles, type Sessions } from './helpers/roles';
import { isReportDue, runWeeklyReports } from '../../server/reports/weekly';
import { loadConfig } from '../../server/config';
import cron from 'node-cron';
import { scheduleWeeklyReports, WEEKLY_REPORT_CRON } from '../../server/reports/cron';

let srv: RunningServer;
let s: Sessions;
let site: Site;
let managerEmail: string;
let secondManagerEmail: string;
let otherManagerEmail: string;
let adminEmail: string;
let technicianEmail: string;
const sent: MailMessage[] = [];
let failNextFor: string | null = null;

const MIN = 60_000;
const Q = 15 * MIN;
// 2026-W47 in Europe/Berlin starts Monday 2026-11-16 00:00 CET = 2026-11-15 23:00 UTC.
const W47 = Date.UTC(2026, 10, 15, 23);
// The job's run: Monday 2026-11-23 07:10 in Berlin (06:10 UTC).
const RUN_AT = Date.UTC(2026, 10, 23, 6, 10);

async function insertQuarter(boxId: number, t: number, airC: number): Promise<void> {
  const n = 90;
  await srv.ctx.sequelize.query(
    `INSERT INTO readings_15m (box_id, bucket_start, samples, box_air_min_c, box_air_max_c, box_air_sum_c, superheat_sum_k, superheat_n, valve_sum_pct, valve_n, suction_sum_kpa_g, covered_ms, compressor_ms, defrost_ms, door_ms)
     VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, 0, 0)`,
    { replacements: [boxId, sqlTs(t).slice(0, 19), n, airC - 0.5, airC + 0.5, airC * n, 4 * n, n, 50 * n, n, 300 * n, Q, 5 * MIN], type: QueryTypes.INSERT },
  );
}

const mailsTo = (email: string) => sent.filter((m) => m.to === email && m.subject.includes(site.name));
const boxesOf = (email: string) => (srv.ctx.mailbox?.messages ?? []).filter((m) => m.to.includes(email) && m.subject.includes(site.name));

beforeAll(async () => {
  srv = await startTestServer();
  // Record every message the mailer sends (attachments included), then pass it to the fake SMTP server.
  const real = srv.ctx.mailer.send.bind(srv.ctx.mailer);
  srv.ctx.mailer.send = async (msg) => {
    if (failNextFor === msg.to) {
      failNextFor = null;
      throw new Error('SMTP relay said no (test)');
    }
    sent.push(msg);
    await real(msg);
  };
  const f = factories(srv);
  const customer = await f.customer();
  const other = await f.customer();
  s = await signInRoles(srv, customer.id);
  site = await f.site(customer.id, { timeZone: 'Europe/Berlin' });
  const box = await f.box(site.id, customer.id, { highLimitC: 5, lowLimitC: 0 });
  // Monday of W47: 96 quarter-hours at 2 °C, four of them (10:00–11:00 local) at 8 °C.
  for (let i = 0; i < 96; i++) await insertQuarter(box.id, W47 + i * Q, i >= 40 && i < 44 ? 8 : 2);
  const raised = new Date(W47 + 10 * 60 * MIN);
  await srv.ctx.models.Alarm.create({
    boxId: box.id,
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
    acknowledgedAt: new Date(raised.getTime() + 18 * MIN),
    acknowledgedBy: null,
    shelvedUntil: null,
    nextEscalationAt: null,
  });
  const users = await Promise.all([f.user('manager', customer.id), f.user('manager', other.id), f.user('manager', customer.id)]);
  const [mine, others, second] = users;
  managerEmail = mine.email;
  otherManagerEmail = others.email;
  secondManagerEmail = second.email;
  adminEmail = (await srv.ctx.models.User.findByPk(s.admin.userId ?? 0))?.email ?? '';
  technicianEmail = (await srv.ctx.models.User.findByPk(s.technician.userId ?? 0))?.email ?? '';
});
afterAll(async () => {
  await srv.stop();
});

describe('the weekly report job', () => {
  it('is off in tests unless asked, and due on Monday from 07:00 site time', () => {
    expect(srv.ctx.config.WEEKLY_REPORTS_ENABLED).toBe(false);
    expect(loadConfig({ ...process.env, WEEKLY_REPORTS_ENABLED: '1' }).WEEKLY_REPORTS_ENABLED).toBe(true);
    expect(isReportDue(RUN_AT, 'Europe/Berlin')).toBe(true);
    expect(isReportDue(RUN_AT - 20 * MIN, 'Europe/Berlin')).toBe(false); // 06:50 local
    expect(isReportDue(RUN_AT, 'America/Chicago')).toBe(false); // 00:10 local
  });

  it('registers an hourly job in UTC when enabled, and stop() removes it', async () => {
    const stop = scheduleWeeklyReports(srv.ctx);
    const task = [...cron.getTasks().values()].find((t) => t.name === 'weekly-reports');
    expect(task?.getPattern()).toBe(WEEKLY_REPORT_CRON);
    expect(task?.getNextRun()?.getUTCMinutes()).toBe(0);
    await stop();
    expect([...cron.getTasks().values()].some((t) => t.name === 'weekly-reports')).toBe(false);
  });

  it('sends one report per recipient once, even when triggered twice at the same time and again after', async () => {
    failNextFor = secondManagerEmail;
    await Promise.all([runWeeklyReports(srv.ctx, RUN_AT), runWeeklyReports(srv.ctx, RUN_AT)]);
    await runWeeklyReports(srv.ctx, RUN_AT);
    for (const email of [managerEmail, adminEmail]) {
      expect(mailsTo(email), email).toHaveLength(1);
      expect(boxesOf(email), email).toHaveLength(1);
    }
    // Another customer's manager and the technicians (not mailed, our choice) get nothing.
    expect(mailsTo(otherManagerEmail)).toHaveLength(0);
    expect(mailsTo(technicianEmail)).toHaveLength(0);
  });

  it('retries a recipient whose mail failed, once', async () => {
    // The first attempt for the second manager failed; the third run above retried it.
    expect(mailsTo(secondManagerEmail)).toHaveLength(1);
    const rows = await srv.ctx.sequelize.query<{ status: string; attempts: number }>(
      `SELECT w.status, w.attempts FROM weekly_reports w JOIN users u ON u.id = w.recipient_user_id WHERE u.email = ? AND w.site_id = ?`,
      { replacements: [secondManagerEmail, site.id], type: QueryTypes.SELECT },
    );
    expect(rows).toEqual([{ status: 'sent', attempts: 2 }]);
  });

  it('carries the week’s figures, the trends link and the chart as an SVG attachment', () => {
    const msg = mailsTo(managerEmail)[0];
    expect(msg?.subject).toBe(`[Rimehold] Weekly report 2026-W47: ${site.name}`);
    // 96 quarters covered, 4 above 5 °C: in range 92 / 96 = 95.83 % → 95.8 %; 4 × 15 = 60 min above
    expect(msg?.text).toContain('Time in range: 95.8 %');
    expect(msg?.text).toContain('Minutes above the high limit: 60 min in 1 excursion(s), longest 60 min');
    expect(msg?.text).toContain('Alarms: 1 (box-air-high 1); 1 acknowledged, mean time to acknowledge 18.0 min');
    expect(msg?.text).toContain(`/records/trends?siteId=${site.id}&week=2026-W47`);
    expect(msg?.text).toContain('Box air temperature is not product temperature');
    const svg = msg?.attachments?.[0];
    expect(svg).toMatchObject({ filename: 'week-chart.svg', contentType: 'image/svg+xml' });
    expect(String(svg?.content)).toMatch(/^<svg[\s\S]*<\/svg>$/);
    // The fake SMTP server received the same figures.
    const inbox = boxesOf(managerEmail)[0]?.text ?? '';
    expect(inbox).toContain('Time in range: 95.8 %');
    // ...as the text part alone (the HTML part and the SVG attachment are not shown as text)
    expect(inbox).not.toMatch(/<table|<svg|Content-Type/i);
  });

  it('sends again to a recipient whose row a crashed run left sending', async () => {
    const rows = await srv.ctx.sequelize.query<{ id: number }>(`SELECT w.id FROM weekly_reports w JOIN users u ON u.id = w.recipient_user_id WHERE u.email = ? AND w.site_id = ?`, {
      replacements: [managerEmail, site.id],
      type: QueryTypes.SELECT,
    });
    // As if a run had claimed the row at 07:50 local and died before the mail went out (stale after 15 min, our choice).
    await srv.ctx.sequelize.query(`UPDATE weekly_reports SET status = 'sending', claimed_at = ? WHERE id = ?`, { replacements: [sqlTs(RUN_AT + 40 * MIN), rows[0]?.id], type: QueryTypes.BULKUPDATE });
    await runWeeklyReports(srv.ctx, RUN_AT + 50 * MIN); // 08:00 local: a fresh claim (10 min old) is left alone
    expect(mailsTo(managerEmail)).toHaveLength(1);
    await runWeeklyReports(srv.ctx, RUN_AT + 60 * MIN); // 08:10 local: the claim is 20 min old, taken as dead
    expect(mailsTo(managerEmail)).toHaveLength(2);
    await runWeeklyReports(srv.ctx, RUN_AT + 120 * MIN);
    expect(mailsTo(managerEmail)).toHaveLength(2);
  });
});

describe('POST /api/v1/reports/weekly/send', () => {
  it('lets an admin send a week now, and sends nobody twice', async () => {
    const res = await call(s.admin, 'post', '/api/v1/reports/weekly/send', { siteId: site.id, week: '2026-W47' });
    expect(res.status, res.text).toBe(200);
    expect(res.body.results).toEqual([expect.objectContaining({ siteId: site.id, isoWeek: '2026-W47', sent: 0, failed: 0 })]);
    expect(mailsTo(adminEmail)).toHaveLength(1);
  });

  it('sends a week not sent before to every recipient', async () => {
    const res = await call(s.admin, 'post', '/api/v1/reports/weekly/send', { siteId: site.id, week: '2026-W46' });
    expect(res.status, res.text).toBe(200);
    expect(res.body.results[0]).toMatchObject({ isoWeek: '2026-W46', failed: 0 });
    expect(res.body.results[0].sent).toBeGreaterThanOrEqual(3); // two managers and at least one admin
    expect(sent.filter((m) => m.to === managerEmail && m.subject.includes('2026-W46'))).toHaveLength(1);
  });

  it('refuses a technician, a bad body and an unknown site with problems', async () => {
    expectProblem(await call(s.technician, 'post', '/api/v1/reports/weekly/send', { siteId: site.id }), 403, 'forbidden');
    expectProblem(await call(s.admin, 'post', '/api/v1/reports/weekly/send', { siteId: 'x', week: '2026-47' }), 400, 'validation');
    expectProblem(await call(s.admin, 'post', '/api/v1/reports/weekly/send', { siteId: 99_999_999 }), 404, 'not-found');
  });
});

describe('GET /api/v1/reports/weekly', () => {
  it('lists every sent report for an admin and only their own for a manager', async () => {
    const all = await call(s.admin, 'get', '/api/v1/reports/weekly?pageSize=200');
    expect(all.status).toBe(200);
    const ofSite = all.body.items.filter((r: { siteId: number }) => r.siteId === site.id);
    expect(ofSite.filter((r: { isoWeek: string; status: string }) => r.isoWeek === '2026-W47' && r.status === 'sent').length).toBeGreaterThanOrEqual(3);
    const mine = await call(s.manager, 'get', '/api/v1/reports/weekly');
    expect(mine.status).toBe(200);
    expect(mine.body.items.every((r: { recipientUserId: number }) => r.recipientUserId === s.manager.userId)).toBe(true);
  });

  it('lists one site’s reports with ?siteId= (the trends page’s list), and refuses a malformed id', async () => {
    const ofSite = await call(s.admin, 'get', `/api/v1/reports/weekly?siteId=${site.id}&pageSize=200`);
    expect(ofSite.status).toBe(200);
    expect(ofSite.body.total).toBeGreaterThanOrEqual(6); // W47 and W46 to two managers and the admins
    expect(ofSite.body.items.every((r: { siteId: number }) => r.siteId === site.id)).toBe(true);
    const none = await call(s.admin, 'get', '/api/v1/reports/weekly?siteId=99999999');
    expect(none.body).toMatchObject({ items: [], total: 0 });
    expectProblem(await call(s.admin, 'get', '/api/v1/reports/weekly?siteId=x'), 400, 'validation');
  });
});
