import { randomUUID } from 'node:crypto';
import type { Response } from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { factories, startTestServer } from './helpers/app';
import { ROLE_NAMES, call, expectProblem, expectStatus, signInRoles, tenant, type RoleName, type Sessions, type Tenant } from './helpers/roles';

let srv: RunningServer;
let f: ReturnType<typeof factories>;
let as: Sessions;
let mine: Tenant;

beforeAll(async () => {
  srv = await startTestServer();
  f = factories(srv);
  mine = await tenant(srv);
  as = await signInRoles(srv, mine.customer.id);
});
afterAll(async () => srv.stop());

const name = (prefix = 'Cust') => `${prefix} ${randomUUID().slice(0, 8)}`;

describe('POST /api/v1/customers', () => {
  it('creates a customer and stores every field', async () => {
    const body = { name: name('Northwind Deli'), contactName: 'Ada Example', contactEmail: 'Ada@Example.com', contactPhone: '+1 555 0100', notes: 'Back door code at the office' };
    const res = await call(as.admin, 'post', '/api/v1/customers', body);
    expectStatus(res, 201);
    expect(res.body).toMatchObject({ ...body, contactEmail: 'ada@example.com', siteCount: 0 });
    const row = await srv.ctx.models.Customer.findByPk(res.body.id);
    expect(row?.toJSON()).toMatchObject({ name: body.name, contactName: 'Ada Example', contactEmail: 'ada@example.com', contactPhone: '+1 555 0100', notes: body.notes });
  });

  it('answers field errors as problem+json and stores nothing', async () => {
    const before = await srv.ctx.models.Customer.count();
    const res = await call(as.admin, 'post', '/api/v1/customers', { name: '  ', contactEmail: 'not an address' });
    expectProblem(res, 400, 'validation');
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['name', 'contactEmail']));
    expect(await srv.ctx.models.Customer.count()).toBe(before);
  });

  it('refuses a second customer with the same name with 409', async () => {
    const n = name();
    expectStatus(await call(as.admin, 'post', '/api/v1/customers', { name: n }), 201);
    const res = await call(as.admin, 'post', '/api/v1/customers', { name: n });
    expectProblem(res, 409, 'conflict');
    expect(await srv.ctx.models.Customer.count({ where: { name: n } })).toBe(1);
  });
});

describe('GET /api/v1/customers', () => {
  it('lists with a search and counts the sites of each customer', async () => {
    const n = name('Searchable Grocer');
    const c = await f.customer(n);
    await f.site(c.id);
    await f.site(c.id);
    const res = await call(as.admin, 'get', `/api/v1/customers?q=${encodeURIComponent(n)}`);
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ page: 1, pageSize: 50, total: 1 });
    expect(res.body.items).toEqual([expect.objectContaining({ id: c.id, name: n, siteCount: 2 })]);
  });

  it('pages: pageSize limits the items and total counts all matches', async () => {
    const tag = randomUUID().slice(0, 8);
    for (let i = 0; i < 3; i++) await f.customer(`Paged ${tag} ${i}`);
    const res = await call(as.admin, 'get', `/api/v1/customers?q=Paged%20${tag}&pageSize=2&page=2`);
    expectStatus(res, 200);
    expect(res.body.total).toBe(3);
    expect(res.body.items.map((c: { name: string }) => c.name)).toEqual([`Paged ${tag} 2`]);
  });

  it('refuses a bad page query with field errors', async () => {
    const res = await call(as.admin, 'get', '/api/v1/customers?pageSize=5000');
    expectProblem(res, 400, 'validation');
    expect(res.body.errors).toHaveProperty('pageSize');
  });
});

describe('PATCH /api/v1/customers/:id', () => {
  it('changes only the fields sent; the others keep their stored values', async () => {
    const created = await call(as.admin, 'post', '/api/v1/customers', { name: name(), contactName: 'Bo Example', contactPhone: '+1 555 0101' });
    const res = await call(as.admin, 'patch', `/api/v1/customers/${created.body.id}`, { notes: 'Walk-in 2 door sticks' });
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ notes: 'Walk-in 2 door sticks', contactName: 'Bo Example', contactPhone: '+1 555 0101' });
    const row = await srv.ctx.models.Customer.findByPk(created.body.id);
    expect(row?.contactName).toBe('Bo Example');
    expect(row?.notes).toBe('Walk-in 2 door sticks');
  });

  it('refuses a bad field with field errors and changes nothing', async () => {
    const c = await f.customer();
    const res = await call(as.admin, 'patch', `/api/v1/customers/${c.id}`, { name: '', contactEmail: 'nope' });
    expectProblem(res, 400, 'validation');
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['name', 'contactEmail']));
    expect((await srv.ctx.models.Customer.findByPk(c.id))?.name).toBe(c.name);
  });

  it('answers 404 for an unknown id', async () => {
    expectProblem(await call(as.admin, 'patch', '/api/v1/customers/99999999', { notes: 'x' }), 404, 'not-found');
  });
});

describe('DELETE /api/v1/customers/:id', () => {
  it('deletes a customer without sites or users', async () => {
    const c = await f.customer();
    expectStatus(await call(as.admin, 'delete', `/api/v1/customers/${c.id}`), 204);
    expect(await srv.ctx.models.Customer.findByPk(c.id)).toBeNull();
  });

  it('refuses with 409 while the customer has sites, and keeps it', async () => {
    const c = await f.customer();
    await f.site(c.id);
    expectProblem(await call(as.admin, 'delete', `/api/v1/customers/${c.id}`), 409, 'conflict');
    expect(await srv.ctx.models.Customer.findByPk(c.id)).not.toBeNull();
  });

  it('refuses with 409 while the customer has users, and keeps it', async () => {
    const c = await f.customer();
    await f.user('manager', c.id);
    expectProblem(await call(as.admin, 'delete', `/api/v1/customers/${c.id}`), 409, 'conflict');
    expect(await srv.ctx.models.Customer.findByPk(c.id)).not.toBeNull();
  });
});

describe('customers role matrix', () => {
  // Each row builds its own target so an allowed write does not disturb the next role.
  const rows: Array<{ what: string; expect: Record<RoleName, number>; run: (role: RoleName) => Promise<Response> }> = [
    { what: 'GET list', expect: { admin: 200, technician: 200, manager: 200, anonymous: 401 }, run: (r) => call(as[r], 'get', '/api/v1/customers') },
    { what: 'GET own customer', expect: { admin: 200, technician: 200, manager: 200, anonymous: 401 }, run: (r) => call(as[r], 'get', `/api/v1/customers/${mine.customer.id}`) },
    { what: 'POST', expect: { admin: 201, technician: 403, manager: 403, anonymous: 401 }, run: (r) => call(as[r], 'post', '/api/v1/customers', { name: name() }) },
    {
      what: 'PATCH own customer',
      expect: { admin: 200, technician: 403, manager: 403, anonymous: 401 },
      run: (r) => call(as[r], 'patch', `/api/v1/customers/${mine.customer.id}`, { notes: `edited by ${r}` }),
    },
    {
      what: 'DELETE',
      expect: { admin: 204, technician: 403, manager: 403, anonymous: 401 },
      run: async (r) => call(as[r], 'delete', `/api/v1/customers/${(await f.customer()).id}`),
    },
  ];
  for (const row of rows) {
    for (const role of ROLE_NAMES) {
      it(`${row.what} as ${role} → ${row.expect[role]}`, async () => {
        expectStatus(await row.run(role), row.expect[role]);
      });
    }
  }

  it('a refused write changes nothing', async () => {
    await call(as.technician, 'patch', `/api/v1/customers/${mine.customer.id}`, { notes: 'technician was here' });
    await call(as.manager, 'patch', `/api/v1/customers/${mine.customer.id}`, { notes: 'manager was here' });
    const row = await srv.ctx.models.Customer.findByPk(mine.customer.id);
    expect(row?.notes ?? '').not.toMatch(/technician|manager/);
  });
});
