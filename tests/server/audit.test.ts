import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { startTestServer } from './helpers/app';
import { ROLE_NAMES, call, expectProblem, expectStatus, signInRoles, tenant, type RoleName, type Sessions } from './helpers/roles';

let srv: RunningServer;
let as: Sessions;

beforeAll(async () => {
  srv = await startTestServer();
  const mine = await tenant(srv);
  as = await signInRoles(srv, mine.customer.id);
});
afterAll(async () => srv.stop());

describe('GET /api/v1/audit', () => {
  it('lists the writes to one entity newest first, with who did them and what changed', async () => {
    const created = await call(as.admin, 'post', '/api/v1/customers', { name: `Audited ${randomUUID().slice(0, 8)}` });
    expectStatus(created, 201);
    const id: number = created.body.id;
    expectStatus(await call(as.admin, 'patch', `/api/v1/customers/${id}`, { notes: 'first edit' }), 200);
    expectStatus(await call(as.admin, 'patch', `/api/v1/customers/${id}`, { notes: 'second edit' }), 200);

    const res = await call(as.admin, 'get', `/api/v1/audit?entityType=customer&entityId=${id}`);
    expectStatus(res, 200);
    expect(res.body.total).toBe(3);
    expect(res.body.items.map((e: { action: string }) => e.action)).toEqual(['customer.update', 'customer.update', 'customer.create']);
    expect(res.body.items[0]).toMatchObject({ entityType: 'customer', entityId: String(id), customerId: id, userId: as.admin.userId, detail: { notes: 'second edit' } });
    expect(typeof res.body.items[0].userName).toBe('string');
    const times = res.body.items.map((e: { at: string }) => Date.parse(e.at));
    expect([...times].sort((a, b) => b - a)).toEqual(times);
    // The answer mirrors the stored rows.
    expect(await srv.ctx.models.AuditEntry.count({ where: { entityType: 'customer', entityId: String(id) } })).toBe(3);
  });

  it('pages', async () => {
    const created = await call(as.admin, 'post', '/api/v1/customers', { name: `Paged audit ${randomUUID().slice(0, 8)}` });
    await call(as.admin, 'patch', `/api/v1/customers/${created.body.id}`, { notes: 'edit' });
    const res = await call(as.admin, 'get', `/api/v1/audit?entityType=customer&entityId=${created.body.id}&pageSize=1&page=2`);
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ page: 2, pageSize: 1, total: 2 });
    expect(res.body.items.map((e: { action: string }) => e.action)).toEqual(['customer.create']);
  });

  it('refuses a bad query with field errors', async () => {
    const res = await call(as.admin, 'get', `/api/v1/audit?pageSize=0&entityType=${'x'.repeat(40)}`);
    expectProblem(res, 400, 'validation');
    expect(res.body.errors).toHaveProperty('pageSize');
    const res2 = await call(as.admin, 'get', `/api/v1/audit?entityType=${'x'.repeat(40)}`);
    expectProblem(res2, 400, 'validation');
    expect(res2.body.errors).toHaveProperty('entityType');
  });

  const expected: Record<RoleName, number> = { admin: 200, technician: 403, manager: 403, anonymous: 401 };
  for (const role of ROLE_NAMES) {
    it(`answers ${expected[role]} to ${role}`, async () => {
      expectStatus(await call(as[role], 'get', '/api/v1/audit'), expected[role]);
    });
  }
});
