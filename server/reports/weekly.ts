/**
 * The weekly report e-mail: for a site and an ISO week, each manager of the site's customer and
 * each admin (the contractor's office; technicians are not mailed, our choice) receives the week's
 * figures — time in range, excursions, alarms and acknowledgement times, findings — with a link to
 * the trends page, an HTML table and the chart as an SVG attachment rendered by ECharts on the server.
 *
 * Once per recipient, site and week: a row is inserted into weekly_reports *before* the mail is sent
 * (the unique key lets only one run win), then marked sent or failed. Failed rows, and rows a crash
 * left 'sending' for longer than STALE_CLAIM_MS, are claimed again by a later run (so a crash between
 * the SMTP answer and the status update can, rarely, send twice; nothing is lost).
 */
import { randomUUID } from 'node:crypto';
import { Op, QueryTypes, type Sequelize } from 'sequelize';
import * as echarts from 'echarts/core';
import { BarChart, LineChart } from 'echarts/charts';
import { GridComponent, LegendComponent, TitleComponent } from 'echarts/components';
import { SVGRenderer } from 'echarts/renderers';
import type { SessionUser } from '../../shared/schemas/auth';
import type { SiteTrendDto, TrendSummaryDto, WeeklyReportDto } from '../../shared/schemas/trends';
import { lastFullIsoWeek } from '../../shared/records/trends';
import { localParts } from '../../shared/records/zonedTime';
import { CAUTIONS } from '../../shared/safety';
import type { AppContext } from '../context';
import type { Site, User } from '../models';
import { sqlTs } from '../db/sequelize';
import { siteTrendOf } from '../trends/service';

echarts.use([BarChart, LineChart, GridComponent, LegendComponent, TitleComponent, SVGRenderer]);

/** A row left 'sending' longer than this is taken to be from a run that died, ms (our choice). */
export const STALE_CLAIM_MS = 15 * 60_000;
/** Attempts per recipient, site and week before giving up (our choice). */
export const MAX_ATTEMPTS = 5;
/** Local hour on Monday when the weekly reports go out (07:00–07:59 site time). */
export const REPORT_LOCAL_HOUR = 7;

/** What one site's run did. */
export interface SiteSendResult {
  siteId: number;
  isoWeek: string;
  sent: number;
  failed: number;
  /** Recipients already served (or being served by another run). */
  skipped: number;
}

const fmt = (x: number | null, unit: string, digits = 1) => (x === null ? 'no data' : `${x.toFixed(digits)} ${unit}`);

/** The people who receive a site's report: its customer's managers and the admins, enabled accounts only. */
export async function recipientsOf(ctx: AppContext, site: Site): Promise<User[]> {
  return ctx.models.User.findAll({
    where: { disabled: false, [Op.or]: [{ role: 'admin' }, { role: 'manager', customerId: site.customerId }] },
    order: [['id', 'ASC']],
  });
}

/** The trends page of the site and week, as linked from the mail. */
export function trendsLink(ctx: AppContext, siteId: number, week: string): string {
  return `${ctx.config.publicUrl}/records/trends?siteId=${siteId}&week=${week}`;
}

/** The week's chart as SVG text: time in range per day for each box (bars), 600 × 300 px. */
export function renderWeekChartSvg(t: SiteTrendDto): string {
  const chart = echarts.init(null, null, { renderer: 'svg', ssr: true, width: 600, height: 300 });
  try {
    chart.setOption({
      animation: false,
      title: { text: `${t.siteName}: time in range per day, ${t.week.week}`, textStyle: { fontSize: 13 } },
      legend: { bottom: 0 },
      grid: { left: 48, right: 16, top: 40, bottom: 56 },
      xAxis: { type: 'category', data: t.week.days.map((d) => d.slice(5)) },
      yAxis: { type: 'value', min: 0, max: 100, name: '%' },
      series: t.boxes.map((b) => ({ type: 'bar', name: b.boxName, data: b.days.map((d) => d.timeInRangePercent) })),
    });
    return chart.renderToSVGString();
  } finally {
    chart.dispose();
  }
}

const esc = (s: string) => s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] ?? c);

function alarmLine(s: TrendSummaryDto): string {
  const rules = Object.entries(s.alarmsByRule)
    .map(([r, n]) => `${r} ${n}`)
    .join(', ');
  const ack = s.meanTimeToAckMin === null ? 'none acknowledged' : `${s.acknowledgedCount} acknowledged, mean time to acknowledge ${s.meanTimeToAckMin.toFixed(1)} min`;
  return `Alarms: ${s.alarmCount}${rules ? ` (${rules})` : ''}; ${s.alarmCount ? ack : 'nothing to acknowledge'}`;
}

/** The mail's text and HTML for one recipient. */
export function composeWeeklyMail(user: Pick<User, 'name'>, t: SiteTrendDto, link: string): { subject: string; text: string; html: string } {
  const s = t.summary;
  const p = t.previousSummary;
  const lines = [
    `Hello ${user.name},`,
    '',
    `Weekly report for ${t.siteName}, week ${t.week.week} (${t.week.days[0]} to ${t.week.days[6]}, ${t.week.timeZone}).`,
    '',
    `Time in range: ${fmt(s.timeInRangePercent, '%')} (week before ${fmt(p.timeInRangePercent, '%')})`,
    `Minutes above the high limit: ${s.minutesAboveLimit.toFixed(0)} min in ${s.excursionCount} excursion(s), longest ${s.longestExcursionMin.toFixed(0)} min (week before ${p.minutesAboveLimit.toFixed(0)} min)`,
    alarmLine(s),
    '',
    'Per box:',
    ...t.boxes.map(
      (b) =>
        `- ${b.boxName}: in range ${fmt(b.summary.timeInRangePercent, '%')}, above ${b.highLimitC.toFixed(1)} °C for ${b.summary.minutesAboveLimit.toFixed(0)} min, ` +
        `${b.summary.alarmCount} alarm(s), compressor duty ${fmt(b.summary.compressorDutyPercent, '%')}, door open ${b.summary.doorOpenMin.toFixed(0)} min`,
    ),
    '',
    t.findings.length ? 'Findings:' : 'Findings: none this week.',
    ...t.findings.map((f) => `- ${f.boxName}: ${f.title}. ${f.text}`),
    '',
    `Trends page: ${link}`,
    'The chart is attached as an SVG file (week-chart.svg); some mail programs do not show SVG, and the figures above carry the same content.',
    '',
    CAUTIONS.foodSafety.text,
    CAUTIONS.notADiagnosis.text,
  ];
  const rows = t.boxes
    .map(
      (b) =>
        `<tr><td>${esc(b.boxName)}</td><td>${fmt(b.summary.timeInRangePercent, '%')}</td><td>${b.summary.minutesAboveLimit.toFixed(0)}</td><td>${b.summary.alarmCount}</td><td>${b.summary.meanTimeToAckMin === null ? '–' : b.summary.meanTimeToAckMin.toFixed(1)}</td><td>${fmt(b.summary.compressorDutyPercent, '%')}</td><td>${b.summary.doorOpenMin.toFixed(0)}</td></tr>`,
    )
    .join('');
  const html = [
    `<p>Hello ${esc(user.name)},</p>`,
    `<p>Weekly report for <b>${esc(t.siteName)}</b>, week ${t.week.week} (${t.week.days[0]} to ${t.week.days[6]}, ${esc(t.week.timeZone)}).</p>`,
    `<table border="1" cellpadding="4" cellspacing="0"><tr><th>Box</th><th>Time in range</th><th>Min above limit</th><th>Alarms</th><th>Mean time to ack (min)</th><th>Duty</th><th>Door open (min)</th></tr>${rows}</table>`,
    t.findings.length ? `<ul>${t.findings.map((f) => `<li><b>${esc(f.boxName)}: ${esc(f.title)}.</b> ${esc(f.text)}</li>`).join('')}</ul>` : '<p>No findings this week.</p>',
    `<p><a href="${esc(link)}">Open the trends page</a>. The chart is attached as SVG (some mail programs do not show it).</p>`,
    `<p><small>${esc(CAUTIONS.foodSafety.text)} ${esc(CAUTIONS.notADiagnosis.text)}</small></p>`,
  ].join('\n');
  return { subject: `[Rimehold] Weekly report ${t.week.week}: ${t.siteName}`, text: lines.join('\n'), html };
}

/** Claims the (recipient, site, week) row for this run: a fresh insert, or a failed / stale one; false when another run has it or it was sent. */
async function claim(sequelize: Sequelize, user: User, siteId: number, week: string, token: string, nowMs: number): Promise<boolean> {
  const now = sqlTs(nowMs);
  const [, inserted] = await sequelize.query(
    `INSERT IGNORE INTO weekly_reports (recipient_user_id, site_id, iso_week, recipient_email, status, attempts, claim_token, claimed_at, created_at) VALUES (?, ?, ?, ?, 'sending', 1, ?, ?, ?)`,
    { replacements: [user.id, siteId, week, user.email, token, now, now], type: QueryTypes.INSERT },
  );
  if (Number(inserted) === 1) return true;
  const updated = await sequelize.query(
    `UPDATE weekly_reports SET status = 'sending', attempts = attempts + 1, claim_token = ?, claimed_at = ?, error = NULL
     WHERE recipient_user_id = ? AND site_id = ? AND iso_week = ? AND attempts < ? AND (status = 'failed' OR (status = 'sending' AND claimed_at < ?))`,
    { replacements: [token, now, user.id, siteId, week, MAX_ATTEMPTS, sqlTs(nowMs - STALE_CLAIM_MS)], type: QueryTypes.BULKUPDATE },
  );
  return Number(updated) === 1;
}

async function finish(sequelize: Sequelize, token: string, status: 'sent' | 'failed', error: string | null, figures: string | null, nowMs: number): Promise<void> {
  await sequelize.query(`UPDATE weekly_reports SET status = ?, error = ?, figures = COALESCE(?, figures), sent_at = ? WHERE claim_token = ?`, {
    replacements: [status, error, figures, status === 'sent' ? sqlTs(nowMs) : null, token],
    type: QueryTypes.BULKUPDATE,
  });
}

/** Recipients of a site's week that need nothing more: sent, given up, or held by a live run. */
async function servedRecipients(sequelize: Sequelize, siteId: number, week: string, nowMs: number): Promise<Set<number>> {
  const rows = await sequelize.query<{ u: number }>(
    `SELECT recipient_user_id AS u FROM weekly_reports WHERE site_id = ? AND iso_week = ?
       AND (status = 'sent' OR attempts >= ? OR (status = 'sending' AND claimed_at >= ?))`,
    { replacements: [siteId, week, MAX_ATTEMPTS, sqlTs(nowMs - STALE_CLAIM_MS)], type: QueryTypes.SELECT },
  );
  return new Set(rows.map((r) => Number(r.u)));
}

/** Sends a site's report for a week to each recipient not yet served; never throws for a single recipient. */
export async function sendSiteWeek(ctx: AppContext, site: Site, week: string, nowMs = Date.now()): Promise<SiteSendResult> {
  const out: SiteSendResult = { siteId: site.id, isoWeek: week, sent: 0, failed: 0, skipped: 0 };
  const served = await servedRecipients(ctx.sequelize, site.id, week, nowMs);
  const all = await recipientsOf(ctx, site);
  const recipients = all.filter((u) => !served.has(u.id));
  out.skipped = all.length - recipients.length;
  if (!recipients.length) return out;
  const trend = await siteTrendOf(ctx.models, ctx.sequelize, site, week);
  if (!trend.boxes.length) return out;
  const svg = renderWeekChartSvg(trend);
  const link = trendsLink(ctx, site.id, week);
  const figures = JSON.stringify({ summary: trend.summary, previousSummary: trend.previousSummary, findings: trend.findings.map((f) => ({ id: f.id, boxId: f.boxId, figures: f.figures })) });
  for (const user of recipients) {
    const token = randomUUID();
    if (!(await claim(ctx.sequelize, user, site.id, week, token, nowMs))) {
      out.skipped++;
      continue;
    }
    try {
      const mail = composeWeeklyMail(user, trend, link);
      await ctx.mailer.send({ to: user.email, ...mail, attachments: [{ filename: 'week-chart.svg', content: svg, contentType: 'image/svg+xml' }] });
      await finish(ctx.sequelize, token, 'sent', null, figures, Date.now());
      out.sent++;
    } catch (err) {
      const msg = (err instanceof Error ? err.message : String(err)).slice(0, 300);
      ctx.logger.warn({ err, siteId: site.id, userId: user.id, week }, 'weekly report mail failed');
      await finish(ctx.sequelize, token, 'failed', msg, figures, Date.now());
      out.failed++;
    }
  }
  return out;
}

/**
 * True when a site's report is due at the instant: Monday from REPORT_LOCAL_HOUR (07:00) site time
 * to the end of that Monday. The reports go out in the 07:00 run; the later runs of the day only
 * catch up what a stopped or crashed server left unsent (recipients already served cost one query).
 */
export function isReportDue(nowMs: number, timeZone: string): boolean {
  const p = localParts(nowMs, timeZone);
  const weekday = new Date(Date.UTC(p.year, p.month - 1, p.day)).getUTCDay();
  return weekday === 1 && p.hour >= REPORT_LOCAL_HOUR;
}

/** The hourly job: every site whose report is due (Monday from 07:00 site time) gets the week that just ended. */
export async function runWeeklyReports(ctx: AppContext, nowMs = Date.now()): Promise<SiteSendResult[]> {
  const sites = await ctx.models.Site.findAll({ order: [['id', 'ASC']] });
  const out: SiteSendResult[] = [];
  for (const site of sites) {
    if (!isReportDue(nowMs, site.timeZone)) continue;
    out.push(await sendSiteWeek(ctx, site, lastFullIsoWeek(nowMs, site.timeZone), nowMs));
  }
  return out;
}

/** Sent (and failed) reports, newest first: all of them for an admin, a user's own otherwise; with siteId, that site's only. */
export async function listWeeklyReports(sequelize: Sequelize, user: SessionUser, page: { offset: number; pageSize: number }, siteId?: number): Promise<{ items: WeeklyReportDto[]; total: number }> {
  const mine = user.role === 'admin' ? { sql: '1=1', replacements: [] as number[] } : { sql: 'w.recipient_user_id = ?', replacements: [user.id] };
  const own = siteId === undefined ? mine : { sql: `${mine.sql} AND w.site_id = ?`, replacements: [...mine.replacements, siteId] };
  const rows = await sequelize.query<Record<string, string | number | null>>(
    `SELECT w.id, w.recipient_user_id, w.recipient_email, w.site_id, s.name AS site_name, w.iso_week, w.status, w.attempts, w.error,
            DATE_FORMAT(w.created_at, '%Y-%m-%dT%H:%i:%s.%fZ') AS created, DATE_FORMAT(w.sent_at, '%Y-%m-%dT%H:%i:%s.%fZ') AS sent
     FROM weekly_reports w JOIN sites s ON s.id = w.site_id WHERE ${own.sql} ORDER BY w.id DESC LIMIT ? OFFSET ?`,
    { replacements: [...own.replacements, page.pageSize, page.offset], type: QueryTypes.SELECT },
  );
  const totals = await sequelize.query<{ n: number | string }>(`SELECT COUNT(*) AS n FROM weekly_reports w WHERE ${own.sql}`, { replacements: own.replacements, type: QueryTypes.SELECT });
  const ms = (s: string | number | null | undefined) => (s === null || s === undefined ? null : new Date(Date.parse(String(s).replace(/(\.\d{3})\d*Z$/, '$1Z'))).toISOString());
  return {
    total: Number(totals[0]?.n ?? 0),
    items: rows.map((r) => ({
      id: Number(r.id),
      recipientUserId: Number(r.recipient_user_id),
      recipientEmail: String(r.recipient_email),
      siteId: Number(r.site_id),
      siteName: String(r.site_name),
      isoWeek: String(r.iso_week),
      status: r.status as WeeklyReportDto['status'],
      attempts: Number(r.attempts),
      error: r.error === null ? null : String(r.error),
      createdAt: ms(r.created) ?? '',
      sentAt: ms(r.sent),
    })),
  };
}
