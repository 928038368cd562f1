import type { Response } from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { boxBody, factories, startTestServer } from './helpers/app';
import { ROLE_NAMES, call, expectProblem, expectStatus, recordBoxChanged, recordRevoked, signInRoles, tenant, type RoleName, type Sessions, type Tenant } from './helpers/roles';

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

/** A box on my tenant's site without a controller. */
const bareBox = () => f.box(mine.site.id, mine.customer.id);

describe('POST /api/v1/boxes', () => {
  it('creates a box, copies the site customer onto it and answers names and no controller', async () => {
    const body = { ...boxBody(mine.site.id), kind: 'freezer' as const, setpointC: -20, highLimitC: -15, lowLimitC: -28, defrostType: 'electric' as const };
    const res = await call(as.admin, 'post', '/api/v1/boxes', body);
    expectStatus(res, 201);
    expect(res.body).toMatchObject({ ...body, siteName: mine.site.name, customerId: mine.customer.id, customerName: mine.customer.name, controller: null });
    const row = await srv.ctx.models.Box.findByPk(res.body.id);
    expect(row?.toJSON()).toMatchObject({ ...body, customerId: mine.customer.id });
  });

  it('answers 422 with a siteId field error for an unknown site, storing nothing', async () => {
    const before = await srv.ctx.models.Box.count();
    const res = await call(as.admin, 'post', '/api/v1/boxes', boxBody(99999999));
    expectProblem(res, 422, 'unknown-site');
    expect(res.body.errors).toHaveProperty('siteId');
    expect(await srv.ctx.models.Box.count()).toBe(before);
  });

  it('answers field errors for out-of-range values, an unknown refrigerant and a missing name', async () => {
    const { name: _omit, ...noName } = boxBody(mine.site.id);
    const res = await call(as.admin, 'post', '/api/v1/boxes', { ...noName, setpointC: -90, refrigerant: 'R-9999', superheatTargetK: 0 });
    expectProblem(res, 400, 'validation');
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['name', 'setpointC', 'refrigerant', 'superheatTargetK']));
  });

  it('refuses limits out of order (low < setpoint < high) with a field error', async () => {
    const res = await call(as.admin, 'post', '/api/v1/boxes', { ...boxBody(mine.site.id), setpointC: 6, highLimitC: 5 });
    expectProblem(res, 400, 'validation');
    expect(res.body.errors).toHaveProperty('highLimitC');
  });
});

describe('GET /api/v1/boxes', () => {
  it('filters by siteId and shows each box with its controller summary, never the secret hash', async () => {
    const res = await call(as.admin, 'get', `/api/v1/boxes?siteId=${mine.site.id}`);
    expectStatus(res, 200);
    expect(res.body.items.every((b: { siteId: number }) => b.siteId === mine.site.id)).toBe(true);
    const withCtl = res.body.items.find((b: { id: number }) => b.id === mine.box.id);
    expect(withCtl.controller).toMatchObject({ id: mine.controller.id, serial: mine.controller.serial, disabled: false, online: false });
    expect(JSON.stringify(res.body)).not.toMatch(/secretHash|sha256:/);
  });

  it('filters by customerId and searches by name', async () => {
    const other = await tenant(srv);
    const found = await call(as.admin, 'get', `/api/v1/boxes?customerId=${other.customer.id}&q=${encodeURIComponent(other.box.name)}`);
    expectStatus(found, 200);
    expect(found.body.items.map((b: { id: number }) => b.id)).toEqual([other.box.id]);
    const none = await call(as.admin, 'get', `/api/v1/boxes?customerId=${mine.customer.id}&q=${encodeURIComponent(other.box.name)}`);
    expect(none.body).toMatchObject({ total: 0, items: [] });
  });

  it('answers 404 for an unknown box', async () => {
    expectProblem(await call(as.admin, 'get', '/api/v1/boxes/99999999'), 404, 'not-found');
  });
});

describe('PATCH /api/v1/boxes/:id', () => {
  it('lets a technician change descriptive fields and alarm limits, stores them, announces and audits the change', async () => {
    const box = await bareBox();
    const rec = recordBoxChanged(srv);
    let res: Response;
    try {
      res = await call(as.technician, 'patch', `/api/v1/boxes/${box.id}`, { name: 'Produce walk-in', highLimitC: 6, alarmDelayMin: 30 });
    } finally {
      rec.stop();
    }
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ name: 'Produce walk-in', highLimitC: 6, alarmDelayMin: 30, setpointC: 2 });
    await box.reload();
    expect(box.toJSON()).toMatchObject({ name: 'Produce walk-in', highLimitC: 6, alarmDelayMin: 30 });
    expect(rec.events).toEqual([{ boxId: box.id }]);
    const entry = await srv.ctx.models.AuditEntry.findOne({ where: { entityType: 'box', entityId: String(box.id), action: 'box.update' } });
    expect(entry?.userId).toBe(as.technician.userId);
    expect(JSON.parse(entry?.detail ?? 'null')).toMatchObject({ changed: { name: 'Produce walk-in', highLimitC: 6 }, was: { highLimitC: 5 } });
  });

  it('refuses a technician changing a controller setting with 403 naming the field, and changes nothing', async () => {
    const box = await bareBox();
    const res = await call(as.technician, 'patch', `/api/v1/boxes/${box.id}`, { name: 'Sneaky', setpointC: 3 });
    expectProblem(res, 403, 'forbidden');
    expect(res.body.errors).toHaveProperty('setpointC');
    await box.reload();
    expect(box.setpointC).toBe(2);
    expect(box.name).not.toBe('Sneaky');
  });

  it('accepts a technician re-sending a controller setting unchanged (a whole form)', async () => {
    const box = await bareBox();
    const res = await call(as.technician, 'patch', `/api/v1/boxes/${box.id}`, { ...boxBody(mine.site.id), name: 'Dairy walk-in' });
    expectStatus(res, 200);
    expect((await srv.ctx.models.Box.findByPk(box.id))?.name).toBe('Dairy walk-in');
  });

  it('checks the merged result: a high limit below the stored setpoint is a 422 and nothing changes', async () => {
    const box = await bareBox();
    const res = await call(as.technician, 'patch', `/api/v1/boxes/${box.id}`, { highLimitC: 1 });
    expectProblem(res, 422, 'limits-order');
    expect(res.body.errors).toHaveProperty('highLimitC');
    expect((await srv.ctx.models.Box.findByPk(box.id))?.highLimitC).toBe(5);
  });

  it('lets an admin change the setpoint of a box without a controller', async () => {
    const box = await bareBox();
    expectStatus(await call(as.admin, 'patch', `/api/v1/boxes/${box.id}`, { setpointC: 3 }), 200);
    expect((await srv.ctx.models.Box.findByPk(box.id))?.setpointC).toBe(3);
  });

  it('sends an admin to the settings endpoint (409) for a controller setting of a box that has a controller', async () => {
    const t = await tenant(srv);
    const res = await call(as.admin, 'patch', `/api/v1/boxes/${t.box.id}`, { refrigerant: 'R-404A' });
    expectProblem(res, 409, 'controller-settings');
    expect(res.body.errors).toHaveProperty('refrigerant');
    expect((await srv.ctx.models.Box.findByPk(t.box.id))?.refrigerant).toBe('R-448A');
  });

  it('moving a box to a site of another customer takes that customer', async () => {
    const box = await bareBox();
    const other = await tenant(srv);
    const res = await call(as.admin, 'patch', `/api/v1/boxes/${box.id}`, { siteId: other.site.id });
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ siteId: other.site.id, siteName: other.site.name, customerId: other.customer.id, customerName: other.customer.name });
    expect((await srv.ctx.models.Box.findByPk(box.id))?.toJSON()).toMatchObject({ siteId: other.site.id, customerId: other.customer.id });
  });

  it('refuses a technician moving a box to another site', async () => {
    const box = await bareBox();
    const other = await f.site(mine.customer.id);
    expectProblem(await call(as.technician, 'patch', `/api/v1/boxes/${box.id}`, { siteId: other.id }), 403, 'forbidden');
    expect((await srv.ctx.models.Box.findByPk(box.id))?.siteId).toBe(mine.site.id);
  });

  it('answers 422 for a move to an unknown site', async () => {
    const box = await bareBox();
    expectProblem(await call(as.admin, 'patch', `/api/v1/boxes/${box.id}`, { siteId: 99999999 }), 422, 'unknown-site');
  });

  it('answers field errors for a bad value', async () => {
    const res = await call(as.admin, 'patch', `/api/v1/boxes/${mine.box.id}`, { kind: 'fridge', alarmDelayMin: 'soon' });
    expectProblem(res, 400, 'validation');
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['kind', 'alarmDelayMin']));
  });
});

describe('DELETE /api/v1/boxes/:id', () => {
  it('deletes a box with its controller and revokes that controller', async () => {
    const t = await tenant(srv);
    const rec = recordRevoked(srv);
    try {
      expectStatus(await call(as.admin, 'delete', `/api/v1/boxes/${t.box.id}`), 204);
    } finally {
      rec.stop();
    }
    expect(await srv.ctx.models.Box.findByPk(t.box.id)).toBeNull();
    expect(await srv.ctx.models.Controller.findByPk(t.controller.id)).toBeNull();
    expect(rec.events).toEqual([{ serial: t.controller.serial, reason: 'disabled' }]);
    expect(await srv.ctx.models.AuditEntry.count({ where: { action: 'box.delete', entityId: String(t.box.id) } })).toBe(1);
  });
});

describe('boxes role matrix', () => {
  const rows: Array<{ what: string; expect: Record<RoleName, number>; run: (role: RoleName) => Promise<Response> }> = [
    { what: 'GET list', expect: { admin: 200, technician: 200, manager: 200, anonymous: 401 }, run: (r) => call(as[r], 'get', '/api/v1/boxes') },
    { what: 'GET own box', expect: { admin: 200, technician: 200, manager: 200, anonymous: 401 }, run: (r) => call(as[r], 'get', `/api/v1/boxes/${mine.box.id}`) },
    { what: 'POST', expect: { admin: 201, technician: 403, manager: 403, anonymous: 401 }, run: (r) => call(as[r], 'post', '/api/v1/boxes', boxBody(mine.site.id)) },
    {
      what: 'PATCH own box',
      expect: { admin: 200, technician: 200, manager: 403, anonymous: 401 },
      run: (r) => call(as[r], 'patch', `/api/v1/boxes/${mine.box.id}`, { name: `renamed by ${r}` }),
    },
    {
      what: 'DELETE own box',
      expect: { admin: 204, technician: 403, manager: 403, anonymous: 401 },
      run: async (r) => call(as[r], 'delete', `/api/v1/boxes/${(await bareBox()).id}`),
    },
  ];
  for (const row of rows) {
    for (const role of ROLE_NAMES) {
      it(`${row.what} as ${role} → ${row.expect[role]}`, async () => {
        expectStatus(await row.run(role), row.expect[role]);
      });
    }
  }

  it('a manager cannot rename their own box', async () => {
    await call(as.manager, 'patch', `/api/v1/boxes/${mine.box.id}`, { name: 'manager rename' });
    expect((await srv.ctx.models.Box.findByPk(mine.box.id))?.name).not.toBe('manager rename');
  });
});
