import type { Response } from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { hashDeviceSecret, verifyDeviceSecret } from '../../server/controllers/secrets';
import { factories, startTestServer } from './helpers/app';
import { ROLE_NAMES, call, expectProblem, expectStatus, recordRevoked, serial, signInRoles, tenant, type RoleName, type Sessions, type Tenant } from './helpers/roles';

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

const bareBox = () => f.box(mine.site.id, mine.customer.id);

async function provision(boxId: number) {
  const res = await call(as.admin, 'post', '/api/v1/controllers', { boxId, serial: serial(), firmware: '2.1.0' });
  expectStatus(res, 201);
  return res.body as { controller: { id: number; serial: string }; deviceSecret: string };
}

describe('POST /api/v1/controllers', () => {
  it('provisions a controller, shows the secret once and stores only its hash', async () => {
    const box = await bareBox();
    const s = serial();
    const res = await call(as.admin, 'post', '/api/v1/controllers', { boxId: box.id, serial: s, firmware: '2.1.0' });
    expectStatus(res, 201);
    // 32 random bytes in base64url are 43 characters (server/controllers/secrets.ts).
    expect(res.body.deviceSecret).toMatch(/^[A-Za-z0-9_-]{43}$/);
    expect(res.body.controller).toEqual({ id: expect.any(Number), serial: s, valveFullSteps: 1600, firmware: '2.1.0', gaugeReference: 'vented-gauge', lastSeenAt: null, online: false, disabled: false });
    const row = await srv.ctx.models.Controller.findByPk(res.body.controller.id);
    expect(row?.boxId).toBe(box.id);
    expect(row?.secretHash).not.toBe(res.body.deviceSecret);
    expect(row?.secretHash).not.toContain(res.body.deviceSecret);
    expect(row?.secretHash).toBe(hashDeviceSecret(res.body.deviceSecret));
    expect(verifyDeviceSecret(res.body.deviceSecret, row?.secretHash ?? '')).toBe(true);
    // Nothing shows the secret again.
    const again = await call(as.admin, 'get', `/api/v1/boxes/${box.id}`);
    expect(again.body.controller).toMatchObject({ serial: s });
    expect(again.text).not.toContain(res.body.deviceSecret);
    const list = await call(as.admin, 'get', `/api/v1/controllers?boxId=${box.id}`);
    expect(list.text).not.toContain(res.body.deviceSecret);
    expect(list.text).not.toContain('sha256:');
  });

  it('refuses a second controller for the same box with 409', async () => {
    const res = await call(as.admin, 'post', '/api/v1/controllers', { boxId: mine.box.id, serial: serial() });
    expectProblem(res, 409, 'conflict');
    expect(await srv.ctx.models.Controller.count({ where: { boxId: mine.box.id } })).toBe(1);
  });

  it('refuses a serial that is already taken with 409', async () => {
    const box = await bareBox();
    expectProblem(await call(as.admin, 'post', '/api/v1/controllers', { boxId: box.id, serial: mine.controller.serial }), 409, 'conflict');
    expect(await srv.ctx.models.Controller.count({ where: { boxId: box.id } })).toBe(0);
  });

  it('answers 422 for an unknown box and field errors for a bad serial', async () => {
    expectProblem(await call(as.admin, 'post', '/api/v1/controllers', { boxId: 99999999, serial: serial() }), 422, 'unknown-box');
    const res = await call(as.admin, 'post', '/api/v1/controllers', { boxId: mine.box.id, serial: 'x!', valveFullSteps: 5 });
    expectProblem(res, 400, 'validation');
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['serial', 'valveFullSteps']));
  });
});

describe('GET /api/v1/controllers', () => {
  it('lists controllers with where they are installed', async () => {
    const res = await call(as.admin, 'get', `/api/v1/controllers?q=${mine.controller.serial}`);
    expectStatus(res, 200);
    expect(res.body.total).toBe(1);
    expect(res.body.items[0]).toMatchObject({
      id: mine.controller.id,
      serial: mine.controller.serial,
      boxId: mine.box.id,
      boxName: mine.box.name,
      siteName: mine.site.name,
      customerId: mine.customer.id,
      customerName: mine.customer.name,
    });
  });

  it('filters by customer', async () => {
    const other = await tenant(srv);
    const res = await call(as.admin, 'get', `/api/v1/controllers?customerId=${other.customer.id}`);
    expectStatus(res, 200);
    expect(res.body.items.map((c: { id: number }) => c.id)).toEqual([other.controller.id]);
  });
});

describe('POST /api/v1/controllers/:id/rotate-secret', () => {
  it('replaces the secret: the new one verifies, the old one no longer does, and the broker is told', async () => {
    const { controller, deviceSecret: oldSecret } = await provision((await bareBox()).id);
    const rec = recordRevoked(srv);
    let res: Response;
    try {
      res = await call(as.admin, 'post', `/api/v1/controllers/${controller.id}/rotate-secret`);
    } finally {
      rec.stop();
    }
    expectStatus(res, 200);
    const newSecret: string = res.body.deviceSecret;
    expect(newSecret).toMatch(/^[A-Za-z0-9_-]{43}$/);
    expect(newSecret).not.toBe(oldSecret);
    expect(res.body.controller).toMatchObject({ id: controller.id, serial: controller.serial });
    const row = await srv.ctx.models.Controller.findByPk(controller.id);
    expect(verifyDeviceSecret(newSecret, row?.secretHash ?? '')).toBe(true);
    expect(verifyDeviceSecret(oldSecret, row?.secretHash ?? '')).toBe(false);
    expect(row?.secretRotatedAt).toBeInstanceOf(Date);
    expect(rec.events).toEqual([{ serial: controller.serial, reason: 'rotated' }]);
  });

  it('answers 404 for an unknown controller', async () => {
    expectProblem(await call(as.admin, 'post', '/api/v1/controllers/99999999/rotate-secret'), 404, 'not-found');
  });
});

describe('POST /api/v1/controllers/:id/disable and /enable', () => {
  it('disables (revoking the connection) and enables again, storing the flag', async () => {
    const { controller } = await provision((await bareBox()).id);
    const rec = recordRevoked(srv);
    try {
      const off = await call(as.admin, 'post', `/api/v1/controllers/${controller.id}/disable`);
      expectStatus(off, 200);
      expect(off.body).toMatchObject({ id: controller.id, disabled: true });
      expect((await srv.ctx.models.Controller.findByPk(controller.id))?.disabled).toBe(true);
      expect(rec.events).toEqual([{ serial: controller.serial, reason: 'disabled' }]);

      const on = await call(as.admin, 'post', `/api/v1/controllers/${controller.id}/enable`);
      expectStatus(on, 200);
      expect(on.body).toMatchObject({ id: controller.id, disabled: false });
      expect((await srv.ctx.models.Controller.findByPk(controller.id))?.disabled).toBe(false);
      expect(rec.events).toHaveLength(1);
    } finally {
      rec.stop();
    }
  });
});

describe('controller audit trail', () => {
  it('records provisioning, rotation, disable and enable, and never the secret', async () => {
    const { controller, deviceSecret: first } = await provision((await bareBox()).id);
    const rotated = await call(as.admin, 'post', `/api/v1/controllers/${controller.id}/rotate-secret`);
    await call(as.admin, 'post', `/api/v1/controllers/${controller.id}/disable`);
    await call(as.admin, 'post', `/api/v1/controllers/${controller.id}/enable`);
    const res = await call(as.admin, 'get', `/api/v1/audit?entityType=controller&entityId=${controller.id}`);
    expectStatus(res, 200);
    expect(res.body.items.map((e: { action: string }) => e.action)).toEqual(['controller.enable', 'controller.disable', 'controller.rotate-secret', 'controller.create']);
    expect(res.body.items.every((e: { userId: number; customerId: number }) => e.userId === as.admin.userId && e.customerId === mine.customer.id)).toBe(true);
    const stored = JSON.stringify(await srv.ctx.models.AuditEntry.findAll({ where: { entityType: 'controller', entityId: String(controller.id) } }));
    for (const secret of [first, rotated.body.deviceSecret as string]) {
      expect(stored).not.toContain(secret);
      expect(stored).not.toContain(hashDeviceSecret(secret));
    }
  });
});

describe('controllers role matrix', () => {
  const rows: Array<{ what: string; expect: Record<RoleName, number>; run: (role: RoleName) => Promise<Response> }> = [
    { what: 'GET list', expect: { admin: 200, technician: 403, manager: 403, anonymous: 401 }, run: (r) => call(as[r], 'get', '/api/v1/controllers') },
    {
      what: 'POST',
      expect: { admin: 201, technician: 403, manager: 403, anonymous: 401 },
      run: async (r) => call(as[r], 'post', '/api/v1/controllers', { boxId: (await bareBox()).id, serial: serial() }),
    },
    { what: 'rotate-secret', expect: { admin: 200, technician: 403, manager: 403, anonymous: 401 }, run: (r) => call(as[r], 'post', `/api/v1/controllers/${mine.controller.id}/rotate-secret`) },
    { what: 'disable', expect: { admin: 200, technician: 403, manager: 403, anonymous: 401 }, run: (r) => call(as[r], 'post', `/api/v1/controllers/${mine.controller.id}/disable`) },
    { what: 'enable', expect: { admin: 200, technician: 403, manager: 403, anonymous: 401 }, run: (r) => call(as[r], 'post', `/api/v1/controllers/${mine.controller.id}/enable`) },
  ];
  for (const row of rows) {
    for (const role of ROLE_NAMES) {
      it(`${row.what} as ${role} → ${row.expect[role]}`, async () => {
        const res = await row.run(role);
        expectStatus(res, row.expect[role]);
        if (res.status >= 400) expect(res.text).not.toMatch(/deviceSecret/);
      });
    }
  }

  it('a refused rotation leaves the stored hash as it was', async () => {
    const before = (await srv.ctx.models.Controller.findByPk(mine.controller.id))?.secretHash;
    await call(as.technician, 'post', `/api/v1/controllers/${mine.controller.id}/rotate-secret`);
    await call(as.manager, 'post', `/api/v1/controllers/${mine.controller.id}/rotate-secret`);
    expect((await srv.ctx.models.Controller.findByPk(mine.controller.id))?.secretHash).toBe(before);
  });
});
