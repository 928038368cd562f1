/**
 * /api/v1/reports/weekly: the sent weekly reports (an admin sees all, anyone else the ones mailed to
 * them; `?siteId=` for one site's), and POST /send for an admin to send a site's (or every site's)
 * week now. Sending keeps the once-per-recipient-site-and-week rule, so a second send of the same
 * week mails nobody again.
 */
import { Router } from 'express';
import { WeeklyReportsQuery, WeeklySendBody } from '../../shared/schemas/trends';
import type { AppContext } from '../context';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { pageOf, pageResult, parseBody, parseQuery } from '../http/validate';
import { problems } from '../http/problem';
import { audit } from '../audit/service';
import { isValidIsoWeek, lastFullIsoWeek } from '../../shared/records/trends';
import { listWeeklyReports, sendSiteWeek, type SiteSendResult } from './weekly';

/** The weekly reports router. */
export function reportRoutes(ctx: AppContext): Router {
  const r = Router();

  r.get('/weekly', requireAuth, async (req, res) => {
    const p = pageOf(req);
    const q = parseQuery(WeeklyReportsQuery, req);
    const { items, total } = await listWeeklyReports(ctx.sequelize, currentUser(req), p, q.siteId);
    res.json(pageResult(items, total, p));
  });

  r.post('/weekly/send', requireRole('admin'), async (req, res) => {
    const body = parseBody(WeeklySendBody, req);
    if (body.week !== undefined && !isValidIsoWeek(body.week)) throw problems.badRequest(`${body.week} does not exist: that year has 52 ISO weeks.`);
    let sites;
    if (body.siteId !== undefined) {
      const site = await ctx.models.Site.findByPk(body.siteId);
      if (!site) throw problems.notFound('site');
      sites = [site];
    } else sites = await ctx.models.Site.findAll({ order: [['id', 'ASC']] });
    const results: SiteSendResult[] = [];
    for (const site of sites) results.push(await sendSiteWeek(ctx, site, body.week ?? lastFullIsoWeek(Date.now(), site.timeZone)));
    await audit(ctx.models, req, { action: 'weekly-report.send', entityType: 'site', entityId: body.siteId ?? null, customerId: sites.length === 1 ? (sites[0]?.customerId ?? null) : null, detail: { week: body.week ?? null, results } });
    res.json({ results });
  });

  return r;
}
