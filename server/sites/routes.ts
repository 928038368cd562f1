/** /api/v1/sites: list (`?customerId=`) and get for every role, scoped to the tenant; writes admin only. */
import { Router } from 'express';
import { SiteBody, type SiteDto } from '../../shared/schemas/customers';
import type { AppContext } from '../context';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { problems } from '../http/problem';
import { sentFields } from '../http/patch';
import { audit } from '../audit/service';
import { SITE_INCLUDE, SITE_LIST, boxCountsOf, createSite, deleteSite, listSites, loadScopedSite, toSiteDto, updateSite, type SiteWithCustomer } from './service';

export { toSiteDto } from './service';

const SitePatchBody = SiteBody.partial();

/** The sites router. */
export function siteRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  async function present(id: number): Promise<SiteDto> {
    const s = await models.Site.findByPk(id, { include: SITE_INCLUDE });
    if (!s) throw problems.notFound('site');
    const sc: SiteWithCustomer = s;
    const counts = await boxCountsOf(models, [id]);
    return toSiteDto(sc, sc.customer?.name ?? '', counts.get(id) ?? 0);
  }

  r.get('/', requireAuth, async (req, res) => {
    res.json(await listSites(models, currentUser(req), parseListQuery(SITE_LIST, req.query)));
  });

  r.get('/:id', requireAuth, async (req, res) => {
    const s = await loadScopedSite(models, currentUser(req), parseId(req));
    const counts = await boxCountsOf(models, [s.id]);
    res.json(toSiteDto(s, s.customer?.name ?? '', counts.get(s.id) ?? 0));
  });

  r.post('/', requireRole('admin'), async (req, res) => {
    const body = parseBody(SiteBody, req);
    const s = await createSite(models, body);
    await audit(models, req, { action: 'site.create', entityType: 'site', entityId: s.id, customerId: s.customerId, detail: body });
    res.status(201).json(await present(s.id));
  });

  r.patch('/:id', requireRole('admin'), async (req, res) => {
    const id = parseId(req);
    const changes = sentFields(parseBody(SitePatchBody, req), req.body);
    const s = await loadScopedSite(models, currentUser(req), id);
    const fromCustomerId = s.customerId;
    const affectedBoxIds = await updateSite(ctx, s, changes);
    for (const boxId of affectedBoxIds) ctx.bus.emit('boxChanged', { boxId });
    await audit(models, req, { action: 'site.update', entityType: 'site', entityId: s.id, customerId: s.customerId, detail: { ...changes, fromCustomerId } });
    res.json(await present(s.id));
  });

  r.delete('/:id', requireRole('admin'), async (req, res) => {
    const s = await loadScopedSite(models, currentUser(req), parseId(req));
    await deleteSite(models, s);
    await audit(models, req, { action: 'site.delete', entityType: 'site', entityId: s.id, customerId: s.customerId, detail: { name: s.name } });
    res.status(204).end();
  });

  return r;
}
