/** /api/v1/sites: list (`?customerId=`) and get for every role, scoped to the tenant; writes admin only. */
import { Router } from 'express';
import { Op, type WhereOptions } from 'sequelize';
import { z } from 'zod';
import { SiteBody, type SiteDto } from '../../shared/schemas/customers';
import type { AppContext } from '../context';
import type { Site } from '../models';
import { currentUser, requireAuth, requireRole, scopeWhere } from '../auth/guards';
import { pageOf, pageResult, parseBody, parseId, parseQuery } from '../http/validate';
import { problems } from '../http/problem';
import { sentFields } from '../http/patch';
import { contains } from '../http/search';
import { audit } from '../audit/service';
import { SITE_INCLUDE, boxCountsOf, createSite, deleteSite, loadScopedSite, updateSite, type SiteWithCustomer } from './service';

/** Presents a site with its customer's name and its number of boxes. */
export function toSiteDto(s: SiteWithCustomer, customerName: string, boxCount: number): SiteDto {
  return {
    id: s.id,
    customerId: s.customerId,
    customerName,
    name: s.name,
    address: s.address,
    timeZone: s.timeZone,
    elevationM: s.elevationM,
    boxCount,
    createdAt: s.createdAt.toISOString(),
    updatedAt: s.updatedAt.toISOString(),
  };
}

const SiteFilter = z.object({ customerId: z.coerce.number().int().positive().optional() });
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
    const user = currentUser(req);
    const p = pageOf(req);
    const filter = parseQuery(SiteFilter, req);
    const where: WhereOptions<Site>[] = [scopeWhere(user)];
    if (filter.customerId !== undefined) where.push({ customerId: filter.customerId });
    if (p.q) where.push({ [Op.or]: [{ name: contains(p.q) }, { address: contains(p.q) }] });
    const { rows, count } = await models.Site.findAndCountAll({
      where: { [Op.and]: where },
      include: SITE_INCLUDE,
      order: [['name', 'ASC'], ['id', 'ASC']],
      limit: p.pageSize,
      offset: p.offset,
    });
    const counts = await boxCountsOf(models, rows.map((s) => s.id));
    const items = rows.map((s: SiteWithCustomer) => toSiteDto(s, s.customer?.name ?? '', counts.get(s.id) ?? 0));
    res.json(pageResult(items, count, p));
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
