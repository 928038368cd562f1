/**
 * Tenant isolation: a store manager sees only their own customer's rows. These tests go red when
 * scopeWhere() stops limiting the queries.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { factories, signIn, startTestServer } from './helpers/app';
import { call, expectProblem, expectStatus, signInRoles, tenant, type Session, type Sessions, type Tenant } from './helpers/roles';

let srv: RunningServer;
let as: Sessions;
let mine: Tenant;
let theirs: Tenant;
let homeless: Session;

beforeAll(async () => {
  srv = await startTestServer();
  mine = await tenant(srv);
  theirs = await tenant(srv);
  as = await signInRoles(srv, mine.customer.id);
  // A manager whose customer was never set sees nothing at all.
  const u = await factories(srv).user('manager', null);
  homeless = { ...(await signIn(srv, u.email, u.password)), userId: u.user.id };
});
afterAll(async () => srv.stop());

type Row = { id: number; customerId?: number };
const ids = (items: Row[]) => items.map((r) => r.id);

describe("a manager asking for another customer's row gets 404", () => {
  it('customer', async () => {
    const res = await call(as.manager, 'get', `/api/v1/customers/${theirs.customer.id}`);
    expectProblem(res, 404, 'not-found');
    expect(res.text).not.toContain(theirs.customer.name);
  });

  it('site', async () => {
    const res = await call(as.manager, 'get', `/api/v1/sites/${theirs.site.id}`);
    expectProblem(res, 404, 'not-found');
    expect(res.text).not.toContain(theirs.site.name);
  });

  it('box, and with it the controller installed on it', async () => {
    const res = await call(as.manager, 'get', `/api/v1/boxes/${theirs.box.id}`);
    expectProblem(res, 404, 'not-found');
    expect(res.text).not.toContain(theirs.box.name);
    expect(res.text).not.toContain(theirs.controller.serial);
  });

  it('the 404 is the same answer as for an id that does not exist', async () => {
    const other = await call(as.manager, 'get', `/api/v1/boxes/${theirs.box.id}`);
    const missing = await call(as.manager, 'get', '/api/v1/boxes/99999999');
    expect({ status: other.status, type: other.body.type, title: other.body.title, detail: other.body.detail }).toEqual({
      status: missing.status,
      type: missing.body.type,
      title: missing.body.title,
      detail: missing.body.detail,
    });
  });

  it('while their own rows answer 200', async () => {
    expectStatus(await call(as.manager, 'get', `/api/v1/customers/${mine.customer.id}`), 200);
    expectStatus(await call(as.manager, 'get', `/api/v1/sites/${mine.site.id}`), 200);
    const box = await call(as.manager, 'get', `/api/v1/boxes/${mine.box.id}`);
    expectStatus(box, 200);
    expect(box.body.controller).toMatchObject({ serial: mine.controller.serial });
  });
});

describe("a manager's lists never include another customer's rows", () => {
  it('customers: only their own', async () => {
    const res = await call(as.manager, 'get', '/api/v1/customers?pageSize=200');
    expectStatus(res, 200);
    expect(ids(res.body.items)).toEqual([mine.customer.id]);
    expect(res.body.total).toBe(1);
    const searched = await call(as.manager, 'get', `/api/v1/customers?q=${encodeURIComponent(theirs.customer.name)}`);
    expect(searched.body).toMatchObject({ total: 0, items: [] });
  });

  it('sites: only their own, even when filtering for the other customer', async () => {
    const all = await call(as.manager, 'get', '/api/v1/sites?pageSize=200');
    expectStatus(all, 200);
    expect(ids(all.body.items)).toContain(mine.site.id);
    expect(all.body.items.every((s: Row) => s.customerId === mine.customer.id)).toBe(true);
    const filtered = await call(as.manager, 'get', `/api/v1/sites?customerId=${theirs.customer.id}`);
    expectStatus(filtered, 200);
    expect(filtered.body).toMatchObject({ total: 0, items: [] });
  });

  it('boxes: only their own, whether filtered by customer, by site or searched by name', async () => {
    const all = await call(as.manager, 'get', '/api/v1/boxes?pageSize=200');
    expectStatus(all, 200);
    expect(ids(all.body.items)).toContain(mine.box.id);
    expect(all.body.items.every((b: Row) => b.customerId === mine.customer.id)).toBe(true);
    for (const q of [`customerId=${theirs.customer.id}`, `siteId=${theirs.site.id}`, `q=${encodeURIComponent(theirs.box.name)}`]) {
      const res = await call(as.manager, 'get', `/api/v1/boxes?${q}`);
      expectStatus(res, 200);
      expect(res.body, q).toMatchObject({ total: 0, items: [] });
    }
  });

  it('a manager without a customer sees no customers, sites or boxes', async () => {
    for (const path of ['customers', 'sites', 'boxes']) {
      const res = await call(homeless, 'get', `/api/v1/${path}`);
      expectStatus(res, 200);
      expect(res.body, path).toMatchObject({ total: 0, items: [] });
    }
    expectProblem(await call(homeless, 'get', `/api/v1/boxes/${mine.box.id}`), 404, 'not-found');
  });
});

describe('a manager can never write, not even to their own rows', () => {
  it('is refused every write with 403, for their own and for other rows alike', async () => {
    const writes: Array<[method: 'post' | 'patch' | 'delete', url: string, body?: object]> = [
      ['post', '/api/v1/customers', { name: 'Manager made' }],
      ['patch', `/api/v1/customers/${mine.customer.id}`, { notes: 'manager' }],
      ['delete', `/api/v1/customers/${theirs.customer.id}`],
      ['post', '/api/v1/sites', { customerId: mine.customer.id, name: 'Manager made', timeZone: 'UTC', elevationM: 0 }],
      ['patch', `/api/v1/sites/${theirs.site.id}`, { name: 'manager' }],
      ['delete', `/api/v1/sites/${mine.site.id}`],
      ['patch', `/api/v1/boxes/${mine.box.id}`, { name: 'manager' }],
      ['patch', `/api/v1/boxes/${theirs.box.id}`, { name: 'manager' }],
      ['delete', `/api/v1/boxes/${theirs.box.id}`],
      ['post', '/api/v1/controllers', { boxId: mine.box.id, serial: 'MGR-0001' }],
      ['post', `/api/v1/controllers/${theirs.controller.id}/disable`],
      ['post', `/api/v1/controllers/${mine.controller.id}/rotate-secret`],
    ];
    for (const [method, url, body] of writes) expectProblem(await call(as.manager, method, url, body), 403, 'forbidden');
    const m = srv.ctx.models;
    expect((await m.Box.findByPk(mine.box.id))?.name).toBe(mine.box.name);
    expect((await m.Box.findByPk(theirs.box.id))?.name).toBe(theirs.box.name);
    expect((await m.Controller.findByPk(theirs.controller.id))?.disabled).toBe(false);
    expect((await m.Controller.findByPk(mine.controller.id))?.secretHash).toBe(mine.controller.secretHash);
    expect(await m.Customer.count({ where: { name: 'Manager made' } })).toBe(0);
  });

  it('cannot list controllers (admin only)', async () => {
    expectProblem(await call(as.manager, 'get', '/api/v1/controllers'), 403, 'forbidden');
  });
});

describe('a technician works across customers', () => {
  it("reads another customer's rows and finds them in lists", async () => {
    expectStatus(await call(as.technician, 'get', `/api/v1/customers/${theirs.customer.id}`), 200);
    expectStatus(await call(as.technician, 'get', `/api/v1/sites/${theirs.site.id}`), 200);
    const box = await call(as.technician, 'get', `/api/v1/boxes/${theirs.box.id}`);
    expectStatus(box, 200);
    expect(box.body.controller).toMatchObject({ serial: theirs.controller.serial });
    const list = await call(as.technician, 'get', `/api/v1/boxes?customerId=${theirs.customer.id}`);
    expect(ids(list.body.items)).toEqual([theirs.box.id]);
  });
});
