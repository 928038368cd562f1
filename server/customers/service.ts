/** Customers: tenant-scoped loading, site counts, and the write use cases (admin only). */
import { ForeignKeyConstraintError, Op, UniqueConstraintError, col, fn, type WhereOptions } from 'sequelize';
import type { CustomerBody, CustomerDto } from '../../shared/schemas/customers';
import type { SessionUser } from '../../shared/schemas/auth';
import type { Page } from '../../shared/schemas/common';
import type { Customer, Models } from '../models';
import { scopeWhere } from '../auth/guards';
import { problems } from '../http/problem';
import { defineList, runList, type ListInputOf } from '../http/list';
import { auditBy } from '../audit/service';
import type { Actor } from '../http/actor';

/** Who acts on customers: the signed-in user and the request id, for the audit trail. */
export type CustomerActor = Actor;

/** Presents a customer row with its number of sites. */
export function toCustomerDto(c: Customer, siteCount: number): CustomerDto {
  return {
    id: c.id,
    name: c.name,
    contactName: c.contactName,
    contactEmail: c.contactEmail,
    contactPhone: c.contactPhone,
    notes: c.notes,
    siteCount,
    createdAt: c.createdAt.toISOString(),
    updatedAt: c.updatedAt.toISOString(),
  };
}

/** The `where` limiting the customers table to the user's tenant (the tenant key is the row's own id). */
export function customerScope(user: SessionUser): WhereOptions<Customer> {
  const scope = scopeWhere(user);
  return scope.customerId === undefined ? {} : { id: scope.customerId };
}

/** GET /customers: searched by name and contact, sorted by name (default) or creation time. */
export const CUSTOMER_LIST = defineList<Customer, 'name' | 'createdAt'>({
  sorts: { name: ['name'], createdAt: ['createdAt'] },
  defaultSort: 'name',
  search: (like) => ({ [Op.or]: [{ name: like }, { contactName: like }, { contactEmail: like }] }),
  scope: customerScope,
});

/** One page of the customers the actor may see, each with its number of sites. */
export async function listCustomers(models: Models, actor: SessionUser, input: ListInputOf<typeof CUSTOMER_LIST>): Promise<Page<CustomerDto>> {
  return runList(models.Customer, CUSTOMER_LIST, actor, input, async (rows) => {
    const counts = await siteCountsOf(models, rows.map((c) => c.id));
    return rows.map((c) => toCustomerDto(c, counts.get(c.id) ?? 0));
  });
}

/** One customer the user may see, or a 404 problem (another tenant's row is "not found"). */
export async function loadScopedCustomer(models: Models, user: SessionUser, id: number): Promise<Customer> {
  const c = await models.Customer.findOne({ where: { [Op.and]: [{ id }, customerScope(user)] } });
  if (!c) throw problems.notFound('customer');
  return c;
}

/** Number of sites per customer id, for the given customers. */
export async function siteCountsOf(models: Models, customerIds: number[]): Promise<Map<number, number>> {
  const out = new Map<number, number>();
  if (customerIds.length === 0) return out;
  const rows = (await models.Site.findAll({
    attributes: [[col('customer_id'), 'k'], [fn('COUNT', col('id')), 'n']],
    where: { customerId: customerIds },
    group: [col('customer_id')],
    raw: true,
  })) as unknown as Array<{ k: number | string; n: number | string }>;
  for (const r of rows) out.set(Number(r.k), Number(r.n));
  return out;
}

/** Throws a 422 problem naming the field when the customer does not exist. */
export async function assertCustomerExists(models: Models, customerId: number, field = 'customerId'): Promise<Customer> {
  const c = await models.Customer.findByPk(customerId);
  if (!c) throw problems.unprocessable('unknown-customer', 'Unknown customer', `Customer ${customerId} does not exist.`, { [field]: ['Unknown customer'] });
  return c;
}

function duplicateName(name: string) {
  return problems.conflict(`A customer named "${name}" already exists.`);
}

async function assertNameFree(models: Models, name: string, exceptId?: number): Promise<void> {
  const other = await models.Customer.findOne({ where: { name } });
  if (other && other.id !== exceptId) throw duplicateName(name);
}

/** Creates a customer and audits it; 409 when the name is taken. */
export async function createCustomer(models: Models, actor: CustomerActor, body: CustomerBody): Promise<CustomerDto> {
  await assertNameFree(models, body.name);
  let c: Customer;
  try {
    c = await models.Customer.create(body);
  } catch (err) {
    if (err instanceof UniqueConstraintError) throw duplicateName(body.name);
    throw err;
  }
  await auditBy(models, actor, { action: 'customer.create', entityType: 'customer', entityId: c.id, customerId: c.id, detail: { name: c.name } });
  return toCustomerDto(c, 0);
}

/** Applies the sent fields to a customer the actor may see and audits it; 404 outside the tenant, 409 when the new name is taken. */
export async function updateCustomer(models: Models, actor: CustomerActor, input: { id: number; changes: Partial<CustomerBody> }): Promise<CustomerDto> {
  const { changes } = input;
  const c = await loadScopedCustomer(models, actor.user, input.id);
  if (changes.name !== undefined) await assertNameFree(models, changes.name, c.id);
  try {
    await c.update(changes);
  } catch (err) {
    if (err instanceof UniqueConstraintError) throw duplicateName(changes.name ?? c.name);
    throw err;
  }
  await auditBy(models, actor, { action: 'customer.update', entityType: 'customer', entityId: c.id, customerId: c.id, detail: changes });
  const counts = await siteCountsOf(models, [c.id]);
  return toCustomerDto(c, counts.get(c.id) ?? 0);
}

/** Deletes a customer the actor may see that has no sites and no users left, and audits it; 409 otherwise. */
export async function deleteCustomer(models: Models, actor: CustomerActor, id: number): Promise<void> {
  const c = await loadScopedCustomer(models, actor.user, id);
  const [sites, users] = await Promise.all([models.Site.count({ where: { customerId: c.id } }), models.User.count({ where: { customerId: c.id } })]);
  if (sites > 0 || users > 0) {
    throw problems.conflict(`Customer "${c.name}" still has ${sites} site(s) and ${users} user(s); remove or move them first.`);
  }
  try {
    await c.destroy();
  } catch (err) {
    if (err instanceof ForeignKeyConstraintError) throw problems.conflict(`Customer "${c.name}" still has records that refer to it and cannot be deleted.`);
    throw err;
  }
  await auditBy(models, actor, { action: 'customer.delete', entityType: 'customer', entityId: c.id, customerId: c.id, detail: { name: c.name } });
}
