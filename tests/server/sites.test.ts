import type { Response } from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { factories, startTestServer } from './helpers/app';
import { ROLE_NAMES, call, expectProblem, expectStatus, recordBoxChanged, signInRoles, tenant, type RoleName, type Sessions, type Tenant } from './helpers/roles';

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

const siteBody = (customerId: number) => ({ customerId, name: 'Main Street Kitchen', address: '1 Main St, Springfield', timeZone: 'America/Denver', elevationM: 1609 });

describe('POST /api/v1/sites', () => {
  it('creates a site and stores every field', async () => {
    const c = await f.customer();
    const res = await call(as.admin, 'post', '/api/v1/sites', siteBody(c.id));
    expectStatus(res, 201);
    expect(res.body).toMatchObject({ ...siteBody(c.id), customerName: c.name, boxCount: 0 });
    const row = await srv.ctx.models.Site.findByPk(res.body.id);
    expect(row?.toJSON()).toMatchObject(siteBody(c.id));
  });

  it('answers 422 with a customerId field error for an unknown customer, storing nothing', async () => {
    const before = await srv.ctx.models.Site.count();
    const res = await call(as.admin, 'post', '/api/v1/sites', siteBody(99999999));
    expectProblem(res, 422, 'unknown-customer');
    expect(res.body.errors).toHaveProperty('customerId');
    expect(await srv.ctx.models.Site.count()).toBe(before);
  });

  it('answers field errors for a bad time zone, an impossible elevation and a missing name', async () => {
    const res = await call(as.admin, 'post', '/api/v1/sites', { customerId: mine.customer.id, name: '', timeZone: 'Mars/Olympus', elevationM: 12000 });
    expectProblem(res, 400, 'validation');
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['name', 'timeZone', 'elevationM']));
  });
});

describe('GET /api/v1/sites', () => {
  it('filters by customerId and counts the boxes of each site', async () => {
    const c = await f.customer();
    const s1 = await f.site(c.id);
    const s2 = await f.site(c.id);
    await f.box(s1.id, c.id);
    await f.box(s1.id, c.id);
    const res = await call(as.admin, 'get', `/api/v1/sites?customerId=${c.id}`);
    expectStatus(res, 200);
    expect(res.body.total).toBe(2);
    const byId = new Map(res.body.items.map((s: { id: number; boxCount: number }) => [s.id, s.boxCount]));
    expect(byId).toEqual(new Map([[s1.id, 2], [s2.id, 0]]));
    expect(res.body.items[0].customerName).toBe(c.name);
  });

  it('refuses a non-numeric customerId filter with a field error', async () => {
    const res = await call(as.admin, 'get', '/api/v1/sites?customerId=abc');
    expectProblem(res, 400, 'validation');
    expect(res.body.errors).toHaveProperty('customerId');
  });

  it('answers 404 for an unknown or malformed id', async () => {
    expectProblem(await call(as.admin, 'get', '/api/v1/sites/99999999'), 404, 'not-found');
    expectProblem(await call(as.admin, 'get', '/api/v1/sites/abc'), 404, 'not-found');
  });
});

describe('PATCH /api/v1/sites/:id', () => {
  it('changes only the fields sent (the address survives a rename)', async () => {
    const created = await call(as.admin, 'post', '/api/v1/sites', siteBody(mine.customer.id));
    const res = await call(as.admin, 'patch', `/api/v1/sites/${created.body.id}`, { name: 'Renamed Kitchen' });
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ name: 'Renamed Kitchen', address: '1 Main St, Springfield', elevationM: 1609 });
    const row = await srv.ctx.models.Site.findByPk(created.body.id);
    expect(row?.address).toBe('1 Main St, Springfield');
    expect(row?.name).toBe('Renamed Kitchen');
  });

  it('announces boxChanged for each of its boxes when the elevation changes, and not for a rename', async () => {
    const site = await f.site(mine.customer.id);
    const b1 = await f.box(site.id, mine.customer.id);
    const b2 = await f.box(site.id, mine.customer.id);
    const rec = recordBoxChanged(srv);
    try {
      expectStatus(await call(as.admin, 'patch', `/api/v1/sites/${site.id}`, { name: 'Only a new name' }), 200);
      expect(rec.events).toEqual([]);
      expectStatus(await call(as.admin, 'patch', `/api/v1/sites/${site.id}`, { elevationM: 2400 }), 200);
      expect(rec.events.map((e) => e.boxId).sort((a, b) => a - b)).toEqual([b1.id, b2.id].sort((a, b) => a - b));
    } finally {
      rec.stop();
    }
    expect((await srv.ctx.models.Site.findByPk(site.id))?.elevationM).toBe(2400);
  });

  it('moving a site to another customer moves its boxes with it', async () => {
    const from = await f.customer();
    const to = await f.customer();
    const site = await f.site(from.id);
    const box = await f.box(site.id, from.id);
    const res = await call(as.admin, 'patch', `/api/v1/sites/${site.id}`, { customerId: to.id });
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ customerId: to.id, customerName: to.name, boxCount: 1 });
    expect((await srv.ctx.models.Box.findByPk(box.id))?.customerId).toBe(to.id);
  });

  it('answers 422 for an unknown customer and changes nothing', async () => {
    const res = await call(as.admin, 'patch', `/api/v1/sites/${mine.site.id}`, { customerId: 99999999 });
    expectProblem(res, 422, 'unknown-customer');
    expect((await srv.ctx.models.Site.findByPk(mine.site.id))?.customerId).toBe(mine.customer.id);
  });
});

describe('DELETE /api/v1/sites/:id', () => {
  it('deletes a site without boxes', async () => {
    const site = await f.site(mine.customer.id);
    expectStatus(await call(as.admin, 'delete', `/api/v1/sites/${site.id}`), 204);
    expect(await srv.ctx.models.Site.findByPk(site.id)).toBeNull();
  });

  it('refuses with 409 while the site has boxes, and keeps it', async () => {
    expectProblem(await call(as.admin, 'delete', `/api/v1/sites/${mine.site.id}`), 409, 'conflict');
    expect(await srv.ctx.models.Site.findByPk(mine.site.id)).not.toBeNull();
  });
});

describe('sites role matrix', () => {
  const rows: Array<{ what: string; expect: Record<RoleName, number>; run: (role: RoleName) => Promise<Response> }> = [
    { what: 'GET list', expect: { admin: 200, technician: 200, manager: 200, anonymous: 401 }, run: (r) => call(as[r], 'get', '/api/v1/sites') },
    { what: 'GET own site', expect: { admin: 200, technician: 200, manager: 200, anonymous: 401 }, run: (r) => call(as[r], 'get', `/api/v1/sites/${mine.site.id}`) },
    { what: 'POST', expect: { admin: 201, technician: 403, manager: 403, anonymous: 401 }, run: (r) => call(as[r], 'post', '/api/v1/sites', siteBody(mine.customer.id)) },
    {
      what: 'PATCH own site',
      expect: { admin: 200, technician: 403, manager: 403, anonymous: 401 },
      run: (r) => call(as[r], 'patch', `/api/v1/sites/${mine.site.id}`, { address: `edited by ${r}` }),
    },
    {
      what: 'DELETE own empty site',
      expect: { admin: 204, technician: 403, manager: 403, anonymous: 401 },
      run: async (r) => call(as[r], 'delete', `/api/v1/sites/${(await f.site(mine.customer.id)).id}`),
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
    for (const r of ['technician', 'manager'] as const) await call(as[r], 'patch', `/api/v1/sites/${mine.site.id}`, { address: `refused ${r}` });
    expect((await srv.ctx.models.Site.findByPk(mine.site.id))?.address ?? '').not.toMatch(/refused/);
  });
});
