/** Sites: tenant-scoped loading, box counts, and the use cases (writes admin only), each taking the actor and its input and answering plain objects. */
import { ForeignKeyConstraintError, Op, col, fn } from 'sequelize';
import { z } from 'zod';
import type { SiteBody, SiteDto } from '../../shared/schemas/customers';
import type { SessionUser } from '../../shared/schemas/auth';
import type { Page } from '../../shared/schemas/common';
import type { AppContext } from '../context';
import type { Models, Site } from '../models';
import { scopeWhere } from '../auth/guards';
import { problems } from '../http/problem';
import { assertCustomerExists } from '../customers/service';
import { defineList, runList, scopeByCustomer, type ListInputOf } from '../http/list';
import type { Actor } from '../http/actor';
import { auditBy } from '../audit/service';

/** A site loaded with its customer (for the customer's name). */
export type SiteWithCustomer = Site & { customer?: { name: string } };

export const SITE_INCLUDE = [{ association: 'customer', attributes: ['id', 'name'] }];

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

type SiteSort = 'name' | 'customerName' | 'timeZone' | 'elevationM';
const SiteFilters = { customerId: z.coerce.number().int().positive().optional() };

/** GET /sites: `?customerId=`, searched by name and address, sorted by name (default), customer, zone or elevation. */
export const SITE_LIST = defineList<Site, SiteSort, typeof SiteFilters>({
  sorts: { name: ['name'], customerName: ['customer', 'name'], timeZone: ['timeZone'], elevationM: ['elevationM'] },
  defaultSort: 'name',
  search: (like) => ({ [Op.or]: [{ name: like }, { address: like }] }),
  filters: SiteFilters,
  filterWhere: (f) => (f.customerId === undefined ? [] : [{ customerId: f.customerId }]),
  scope: scopeByCustomer<Site>(),
  include: SITE_INCLUDE,
});

/** One page of the sites the actor may see, with customer names and box counts. */
export async function listSites(models: Models, actor: SessionUser, input: ListInputOf<typeof SITE_LIST>): Promise<Page<SiteDto>> {
  return runList(models.Site, SITE_LIST, actor, input, async (rows) => {
    const counts = await boxCountsOf(models, rows.map((s) => s.id));
    return rows.map((s: SiteWithCustomer) => toSiteDto(s, s.customer?.name ?? '', counts.get(s.id) ?? 0));
  });
}

/** One site the user may see, or a 404 problem (another tenant's site is "not found"). */
export async function loadScopedSite(models: Models, user: SessionUser, id: number): Promise<SiteWithCustomer> {
  const s = await models.Site.findOne({ where: { [Op.and]: [{ id }, scopeWhere(user)] }, include: SITE_INCLUDE });
  if (!s) throw problems.notFound('site');
  return s;
}

/** Number of boxes per site id, for the given sites. */
export async function boxCountsOf(models: Models, siteIds: number[]): Promise<Map<number, number>> {
  const out = new Map<number, number>();
  if (siteIds.length === 0) return out;
  const rows = (await models.Box.findAll({
    attributes: [[col('site_id'), 'k'], [fn('COUNT', col('id')), 'n']],
    where: { siteId: siteIds },
    group: [col('site_id')],
    raw: true,
  })) as unknown as Array<{ k: number | string; n: number | string }>;
  for (const r of rows) out.set(Number(r.k), Number(r.n));
  return out;
}

/** A site the actor may see, presented with its customer's name and box count; 404 outside the tenant. */
export async function getSite(models: Models, actor: Actor, id: number): Promise<SiteDto> {
  return presentSite(models, await loadScopedSite(models, actor.user, id));
}

async function presentSite(models: Models, s: SiteWithCustomer): Promise<SiteDto> {
  const counts = await boxCountsOf(models, [s.id]);
  return toSiteDto(s, s.customer?.name ?? '', counts.get(s.id) ?? 0);
}

/** Creates a site of an existing customer (422 when the customer does not exist) and audits it. */
export async function createSite(ctx: AppContext, actor: Actor, body: SiteBody): Promise<SiteDto> {
  const { models } = ctx;
  await assertCustomerExists(models, body.customerId);
  const created = await models.Site.create(body);
  await auditBy(models, actor, { action: 'site.create', entityType: 'site', entityId: created.id, customerId: created.customerId, detail: body });
  return presentSite(models, await loadScopedSite(models, actor.user, created.id));
}

/**
 * Applies the sent fields to a site the actor may see (404 otherwise) and audits it. Moving the site
 * to another customer moves its boxes too (boxes.customer_id is a copy of the site's, used for tenant
 * scoping). When something the ingest caches per box (elevation, tenant) changed, every box of the
 * site is announced as changed.
 */
export async function updateSite(ctx: AppContext, actor: Actor, input: { id: number; changes: Partial<SiteBody> }): Promise<SiteDto> {
  const { models } = ctx;
  const { changes } = input;
  const site = await loadScopedSite(models, actor.user, input.id);
  const fromCustomerId = site.customerId;
  const movesCustomer = changes.customerId !== undefined && changes.customerId !== site.customerId;
  if (movesCustomer && changes.customerId !== undefined) await assertCustomerExists(models, changes.customerId);
  const elevationChanged = changes.elevationM !== undefined && changes.elevationM !== site.elevationM;
  await ctx.sequelize.transaction(async (transaction) => {
    await site.update(changes, { transaction });
    if (movesCustomer) await models.Box.update({ customerId: site.customerId }, { where: { siteId: site.id }, transaction });
  });
  if (movesCustomer || elevationChanged) {
    const boxes = await models.Box.findAll({ attributes: ['id'], where: { siteId: site.id } });
    for (const b of boxes) ctx.bus.emit('boxChanged', { boxId: b.id });
  }
  await auditBy(models, actor, { action: 'site.update', entityType: 'site', entityId: site.id, customerId: site.customerId, detail: { ...changes, fromCustomerId } });
  // Reloaded: a move to another customer changes the name shown.
  const fresh = await models.Site.findByPk(site.id, { include: SITE_INCLUDE });
  if (!fresh) throw problems.notFound('site');
  return presentSite(models, fresh);
}

/** Deletes a site the actor may see that has no boxes, and audits it; 409 while it still has boxes. */
export async function deleteSite(ctx: AppContext, actor: Actor, id: number): Promise<void> {
  const { models } = ctx;
  const site = await loadScopedSite(models, actor.user, id);
  const boxes = await models.Box.count({ where: { siteId: site.id } });
  if (boxes > 0) throw problems.conflict(`Site "${site.name}" still has ${boxes} box(es); delete or move them first.`);
  try {
    await site.destroy();
  } catch (err) {
    if (err instanceof ForeignKeyConstraintError) throw problems.conflict(`Site "${site.name}" still has records that refer to it and cannot be deleted.`);
    throw err;
  }
  await auditBy(models, actor, { action: 'site.delete', entityType: 'site', entityId: site.id, customerId: site.customerId, detail: { name: site.name } });
}
