/**
 * /api/v1/trends: a box's or a site's week (`?week=YYYY-Www`, default the last full week in the
 * site's zone) as JSON, and its daily figures as CSV. Every role; a manager sees only their own
 * customer's boxes and sites (another customer's id is a 404).
 */
import { Router } from 'express';
import { TrendsQuery } from '../../shared/schemas/trends';
import type { AppContext } from '../context';
import { currentUser, requireAuth } from '../auth/guards';
import { parseId, parseQuery } from '../http/validate';
import { boxTrend, dailyCsv, siteTrend } from './service';

/** The trends router. */
export function trendsRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models, sequelize } = ctx;

  const sendCsv = (res: import('express').Response, name: string, text: string) => {
    res.setHeader('Content-Disposition', `attachment; filename="${name.replace(/[^A-Za-z0-9_.-]/g, '_')}"`);
    res.type('text/csv; charset=utf-8').send(text);
  };

  r.get('/boxes/:id', requireAuth, async (req, res) => {
    const q = parseQuery(TrendsQuery, req);
    res.json(await boxTrend(models, sequelize, currentUser(req), parseId(req), q.week));
  });

  r.get('/boxes/:id/export.csv', requireAuth, async (req, res) => {
    const q = parseQuery(TrendsQuery, req);
    const t = await boxTrend(models, sequelize, currentUser(req), parseId(req), q.week);
    sendCsv(res, `trends-box-${t.boxId}-${t.week.week}.csv`, dailyCsv([t]));
  });

  r.get('/sites/:id', requireAuth, async (req, res) => {
    const q = parseQuery(TrendsQuery, req);
    res.json(await siteTrend(models, sequelize, currentUser(req), parseId(req), q.week));
  });

  r.get('/sites/:id/export.csv', requireAuth, async (req, res) => {
    const q = parseQuery(TrendsQuery, req);
    const t = await siteTrend(models, sequelize, currentUser(req), parseId(req), q.week);
    sendCsv(res, `trends-site-${t.siteId}-${t.week.week}.csv`, dailyCsv(t.boxes));
  });

  return r;
}
