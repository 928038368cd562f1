/** /api/v1/customers: list and get for every role (a manager sees only their own); writes admin only. */
import { Router } from 'express';
import { CustomerBody, type CustomerDto } from '../../shared/schemas/customers';
import type { AppContext } from '../context';
import type { Customer } from '../models';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { actorOf } from '../http/actor';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { sentFields } from '../http/patch';
import { CUSTOMER_LIST, createCustomer, deleteCustomer, listCustomers, loadScopedCustomer, siteCountsOf, toCustomerDto, updateCustomer } from './service';

export { toCustomerDto } from './service';

const CustomerPatchBody = CustomerBody.partial();

/** The customers router. */
export function customerRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  async function present(c: Customer): Promise<CustomerDto> {
    const counts = await siteCountsOf(models, [c.id]);
    return toCustomerDto(c, counts.get(c.id) ?? 0);
  }

  r.get('/', requireAuth, async (req, res) => {
    res.json(await listCustomers(models, currentUser(req), parseListQuery(CUSTOMER_LIST, req.query)));
  });

  r.get('/:id', requireAuth, async (req, res) => {
    const c = await loadScopedCustomer(models, currentUser(req), parseId(req));
    res.json(await present(c));
  });

  r.post('/', requireRole('admin'), async (req, res) => {
    const body = parseBody(CustomerBody, req);
    res.status(201).json(await createCustomer(models, actorOf(req), body));
  });

  r.patch('/:id', requireRole('admin'), async (req, res) => {
    const id = parseId(req);
    const changes = sentFields(parseBody(CustomerPatchBody, req), req.body);
    res.json(await updateCustomer(models, actorOf(req), { id, changes }));
  });

  r.delete('/:id', requireRole('admin'), async (req, res) => {
    await deleteCustomer(models, actorOf(req), parseId(req));
    res.status(204).end();
  });

  return r;
}
