/** /api/v1/sites: list (`?customerId=`) and get for every role, scoped to the tenant; writes admin only. Thin: the rules live in ./service.ts. */
import { Router } from 'express';
import { SiteBody } from '../../shared/schemas/customers';
import type { AppContext } from '../context';
import { requireAuth, requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { sentFields } from '../http/patch';
import { actorOf } from '../http/actor';
import { SITE_LIST, createSite, deleteSite, getSite, listSites, updateSite } from './service';

export { toSiteDto } from './service';

const SitePatchBody = SiteBody.partial();

/** The sites router. */
export function siteRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  r.get('/', requireAuth, async (req, res) => {
    res.json(await listSites(models, actorOf(req).user, parseListQuery(SITE_LIST, req.query)));
  });

  r.get('/:id', requireAuth, async (req, res) => {
    res.json(await getSite(models, actorOf(req), parseId(req)));
  });

  r.post('/', requireRole('admin'), async (req, res) => {
    res.status(201).json(await createSite(ctx, actorOf(req), parseBody(SiteBody, req)));
  });

  r.patch('/:id', requireRole('admin'), async (req, res) => {
    const id = parseId(req);
    const changes = sentFields(parseBody(SitePatchBody, req), req.body);
    res.json(await updateSite(ctx, actorOf(req), { id, changes }));
  });

  r.delete('/:id', requireRole('admin'), async (req, res) => {
    await deleteSite(ctx, actorOf(req), parseId(req));
    res.status(204).end();
  });

  return r;
}
