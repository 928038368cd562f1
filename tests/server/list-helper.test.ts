/** The one list helper (server/http/list.ts) behind every list endpoint: search, sort whitelist, paging bounds, tenant scope. */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { SessionUser } from '../../shared/schemas/auth';
import type { RunningServer } from '../../server/main';
import { HttpProblem } from '../../server/http/problem';
import { parseListQuery, runList } from '../../server/http/list';
import { BOX_LIST, listBoxes } from '../../server/boxes/service';
import { CUSTOMER_LIST } from '../../server/customers/service';
import { factories, startTestServer } from './helpers/app';
import { call, expectProblem, signInRoles, tenant, type Sessions, type Tenant } from './helpers/roles';

let srv: RunningServer;
let f: ReturnType<typeof factories>;
let as: Sessions;
let mine: Tenant;
let theirs: Tenant;
const tag = randomUUID().slice(0, 8);

beforeAll(async () => {
  srv = await startTestServer();
  f = factories(srv);
  mine = await tenant(srv);
  theirs = await tenant(srv);
  as = await signInRoles(srv, mine.customer.id);
});
afterAll(async () => srv.stop());

const actor = (role: SessionUser['role'], customerId: number | null): SessionUser => ({ id: 1, email: 'x@example.com', name: 'X', role, customerId, unitSystem: 'metric-kpa' });

function problemOf(fn: () => unknown): HttpProblem {
  try {
    fn();
  } catch (e) {
    if (e instanceof HttpProblem) return e;
    throw e;
  }
  throw new Error('no problem thrown');
}

describe('parseListQuery', () => {
  it('fills the defaults: first page of 50, the spec’s default sort, ascending, no search', () => {
    expect(parseListQuery(BOX_LIST, {})).toEqual({ page: 1, pageSize: 50, q: undefined, sort: 'name', order: 'asc', filter: { siteId: undefined, customerId: undefined, hasController: undefined } });
  });

  it('coerces the page, the filters and trims the search', () => {
    const input = parseListQuery(BOX_LIST, { page: '3', pageSize: '10', q: '  walk-in ', sort: 'siteName', order: 'desc', siteId: '7' });
    expect(input).toMatchObject({ page: 3, pageSize: 10, q: 'walk-in', sort: 'siteName', order: 'desc', filter: { siteId: 7 } });
  });

  it('refuses a sort column outside the whitelist with a 400 validation problem naming `sort`', () => {
    const p = problemOf(() => parseListQuery(CUSTOMER_LIST, { sort: 'contactEmail' }));
    expect(p.status).toBe(400);
    expect(p.errors).toHaveProperty('sort');
    expect(p.errors?.sort?.[0]).toContain('name, createdAt');
  });

  it('refuses an order other than asc or desc', () => {
    expect(problemOf(() => parseListQuery(CUSTOMER_LIST, { order: 'sideways' })).errors).toHaveProperty('order');
  });

  it.each([
    ['page', '0'],
    ['page', '-1'],
    ['page', '1.5'],
    ['pageSize', '0'],
    ['pageSize', '201'],
  ])('refuses %s=%s', (key, value) => {
    const p = problemOf(() => parseListQuery(CUSTOMER_LIST, { [key]: value }));
    expect(p.status).toBe(400);
    expect(p.errors).toHaveProperty(key);
  });

  it('accepts the largest page size, 200', () => {
    expect(parseListQuery(CUSTOMER_LIST, { pageSize: '200' }).pageSize).toBe(200);
  });
});

describe('runList', () => {
  it('limits a manager to their own customer’s rows, whatever the filter asks', async () => {
    const manager = actor('manager', mine.customer.id);
    const all = await runList(srv.ctx.models.Box, BOX_LIST, manager, parseListQuery(BOX_LIST, { pageSize: '200' }), (rows) => rows.map((b) => b.customerId));
    expect(all.items.length).toBeGreaterThan(0);
    expect(all.items.every((c) => c === mine.customer.id)).toBe(true);
    const asked = await runList(srv.ctx.models.Box, BOX_LIST, manager, parseListQuery(BOX_LIST, { customerId: String(theirs.customer.id) }), (rows) => rows.map((b) => b.id));
    expect(asked).toEqual({ items: [], total: 0, page: 1, pageSize: 50 });
  });

  it('shows a manager without a customer nothing', async () => {
    const res = await listBoxes(srv.ctx.models, actor('manager', null), parseListQuery(BOX_LIST, { pageSize: '200' }));
    expect(res).toMatchObject({ items: [], total: 0 });
  });

  it('lets a technician see every customer', async () => {
    const res = await listBoxes(srv.ctx.models, actor('technician', null), parseListQuery(BOX_LIST, { pageSize: '200', sort: 'updatedAt', order: 'desc' }));
    const customers = new Set(res.items.map((b) => b.customerId));
    expect(customers.has(mine.customer.id) && customers.has(theirs.customer.id)).toBe(true);
  });

  it('searches with LIKE wildcards taken literally', async () => {
    const site = await f.site(mine.customer.id);
    await f.box(site.id, mine.customer.id, { name: `Pct ${tag} 100% cooler` });
    await f.box(site.id, mine.customer.id, { name: `Pct ${tag} 1000 cooler` });
    const res = await listBoxes(srv.ctx.models, actor('admin', null), parseListQuery(BOX_LIST, { q: `${tag} 100%` }));
    expect(res.items.map((b) => b.name)).toEqual([`Pct ${tag} 100% cooler`]);
  });

  it('sorts by the whitelisted column in both directions, ties broken by id', async () => {
    const site = await f.site(mine.customer.id);
    const made = [];
    for (const [name, setpointC] of [[`Srt ${tag} b`, 4], [`Srt ${tag} a`, 1], [`Srt ${tag} c`, 4]] as const) made.push(await f.box(site.id, mine.customer.id, { name, setpointC }));
    const admin = actor('admin', null);
    const up = await listBoxes(srv.ctx.models, admin, parseListQuery(BOX_LIST, { q: `Srt ${tag}`, sort: 'setpointC' }));
    expect(up.items.map((b) => b.name)).toEqual([`Srt ${tag} a`, `Srt ${tag} b`, `Srt ${tag} c`]);
    const down = await listBoxes(srv.ctx.models, admin, parseListQuery(BOX_LIST, { q: `Srt ${tag}`, sort: 'setpointC', order: 'desc' }));
    expect(down.items.map((b) => b.name)).toEqual([`Srt ${tag} c`, `Srt ${tag} b`, `Srt ${tag} a`]);
  });

  it('pages: a page past the last answers no items and the full total', async () => {
    const site = await f.site(mine.customer.id);
    for (let i = 0; i < 3; i++) await f.box(site.id, mine.customer.id, { name: `Pg ${tag} ${i}` });
    const admin = actor('admin', null);
    const second = await listBoxes(srv.ctx.models, admin, parseListQuery(BOX_LIST, { q: `Pg ${tag}`, pageSize: '2', page: '2' }));
    expect(second).toMatchObject({ total: 3, page: 2, pageSize: 2 });
    expect(second.items.map((b) => b.name)).toEqual([`Pg ${tag} 2`]);
    const past = await listBoxes(srv.ctx.models, admin, parseListQuery(BOX_LIST, { q: `Pg ${tag}`, pageSize: '2', page: '9' }));
    expect(past).toEqual({ items: [], total: 3, page: 9, pageSize: 2 });
  });
});

describe('list endpoints through the helper', () => {
  it('GET /api/v1/users refuses to sort by a column that is not listed (the password hash)', async () => {
    const res = await call(as.admin, 'get', '/api/v1/users?sort=passwordHash');
    expectProblem(res, 400, 'validation');
    expect(res.body.errors).toHaveProperty('sort');
  });

  it('GET /api/v1/sites sorts by customer name on the joined table', async () => {
    const res = await call(as.admin, 'get', '/api/v1/sites?sort=customerName&order=desc&pageSize=200');
    expect(res.status).toBe(200);
    const names: string[] = res.body.items.map((s: { customerName: string }) => s.customerName);
    expect(names).toEqual([...names].sort((a, b) => b.localeCompare(a, 'en', { sensitivity: 'base' })));
  });

  it('GET /api/v1/boxes?hasController=false lists only boxes still without a controller', async () => {
    const bare = await f.box(mine.site.id, mine.customer.id, { name: `Bare ${tag}` });
    const res = await call(as.admin, 'get', `/api/v1/boxes?hasController=false&pageSize=200`);
    expect(res.status).toBe(200);
    const ids = res.body.items.map((b: { id: number }) => b.id);
    expect(ids).toContain(bare.id);
    expect(ids).not.toContain(mine.box.id);
    expect(res.body.items.every((b: { controller: unknown }) => b.controller === null)).toBe(true);
  });

  it('GET /api/v1/controllers finds a controller by its box’s name and keeps the list shape', async () => {
    const res = await call(as.admin, 'get', `/api/v1/controllers?q=${encodeURIComponent(mine.box.name)}`);
    expect(res.status).toBe(200);
    expect(res.body).toMatchObject({ page: 1, pageSize: 50, total: 1 });
    expect(res.body.items[0]).toMatchObject({ id: mine.controller.id, boxId: mine.box.id, customerId: mine.customer.id, gaugeReference: 'vented-gauge' });
  });

  it('GET /api/v1/customers keeps a manager to their own customer under any sort', async () => {
    const res = await call(as.manager, 'get', '/api/v1/customers?sort=createdAt&order=desc');
    expect(res.status).toBe(200);
    expect(res.body.items.map((c: { id: number }) => c.id)).toEqual([mine.customer.id]);
  });
});
