/**
 * The write use cases of the list pages' entities (customers, sites, boxes, controllers) are called
 * without a request: they take the actor and their input, keep the actor to their tenant, write the
 * audit entry with the actor's user and request id, and answer plain objects (no Sequelize rows).
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import type { Actor } from '../../server/http/actor';
import { HttpProblem } from '../../server/http/problem';
import { createCustomer } from '../../server/customers/service';
import { createSite, deleteSite, getSite, updateSite } from '../../server/sites/service';
import { createBox, deleteBox, getBox, updateBox } from '../../server/boxes/service';
import { provisionController, rotateControllerSecret, setControllerDisabled, updateController } from '../../server/controllers/service';
import { boxBody, factories, startTestServer } from './helpers/app';
import { serial, tenant, type Tenant } from './helpers/roles';

let srv: RunningServer;
let admin: Actor;
let mine: Tenant;
let theirs: Tenant;
let managerOfTheirs: Actor;

beforeAll(async () => {
  srv = await startTestServer();
  const f = factories(srv);
  mine = await tenant(srv);
  theirs = await tenant(srv);
  const a = (await f.user('admin')).user;
  admin = { user: { id: a.id, email: a.email, name: a.name, role: 'admin', customerId: null, unitSystem: 'metric-kpa' }, userId: a.id, requestId: `req-${randomUUID()}` };
  const m = (await f.user('manager', theirs.customer.id)).user;
  managerOfTheirs = { user: { id: m.id, email: m.email, name: m.name, role: 'manager', customerId: theirs.customer.id, unitSystem: 'metric-kpa' }, userId: m.id, requestId: null };
});
afterAll(async () => srv.stop());

/** A plain JSON-able object: no model instance, nothing lost in JSON. */
function expectPlain(v: unknown): void {
  expect(v).not.toBeNull();
  expect(Object.getPrototypeOf(v)).toBe(Object.prototype);
  expect(JSON.parse(JSON.stringify(v))).toEqual(v);
}

async function lastAudit(action: string, entityId: number) {
  return srv.ctx.models.AuditEntry.findOne({ where: { action, entityId: String(entityId) }, order: [['id', 'DESC']] });
}

async function problemOf(p: Promise<unknown>): Promise<HttpProblem> {
  try {
    await p;
  } catch (e) {
    if (e instanceof HttpProblem) return e;
    throw e;
  }
  throw new Error('no problem thrown');
}

describe('use cases take the actor and the input', () => {
  it('sites: create, update and delete answer plain objects and audit the actor with its request id', async () => {
    const customer = await createCustomer(srv.ctx.models, admin, { name: `Use-case customer ${randomUUID().slice(0, 8)}`, contactName: null, contactEmail: null, contactPhone: null, notes: null });
    expectPlain(customer);
    const site = await createSite(srv.ctx, admin, { customerId: customer.id, name: 'Use-case site', address: null, timeZone: 'Europe/Berlin', elevationM: 120 });
    expectPlain(site);
    expect(site).toMatchObject({ customerId: customer.id, customerName: customer.name, boxCount: 0, timeZone: 'Europe/Berlin' });
    expect(await lastAudit('site.create', site.id)).toMatchObject({ userId: admin.userId, requestId: admin.requestId, customerId: customer.id });

    const changed: number[] = [];
    const onChanged = (e: { boxId: number }) => changed.push(e.boxId);
    const box = await createBox(srv.ctx, admin, boxBody(site.id));
    srv.ctx.bus.on('boxChanged', onChanged);
    try {
      const moved = await updateSite(srv.ctx, admin, { id: site.id, changes: { elevationM: 300 } });
      expectPlain(moved);
      expect(moved.elevationM).toBe(300);
      // The ingest caches the elevation per box: the site's boxes are announced.
      expect(changed).toContain(box.id);
    } finally {
      srv.ctx.bus.off('boxChanged', onChanged);
    }
    expect(await lastAudit('site.update', site.id)).toMatchObject({ userId: admin.userId, requestId: admin.requestId });
    expectPlain(await getSite(srv.ctx.models, admin, site.id));

    await deleteBox(srv.ctx, admin, box.id);
    await deleteSite(srv.ctx, admin, site.id);
    expect(await srv.ctx.models.Site.findByPk(site.id)).toBeNull();
    expect(await lastAudit('site.delete', site.id)).toMatchObject({ userId: admin.userId, requestId: admin.requestId });
  });

  it("keeps a manager to their own tenant: another customer's site and box are not found", async () => {
    expect((await problemOf(getSite(srv.ctx.models, managerOfTheirs, mine.site.id))).status).toBe(404);
    expect((await problemOf(updateSite(srv.ctx, managerOfTheirs, { id: mine.site.id, changes: { name: 'taken over' } }))).status).toBe(404);
    expect((await problemOf(getBox(srv.ctx.models, managerOfTheirs, mine.box.id))).status).toBe(404);
    expectPlain(await getBox(srv.ctx.models, managerOfTheirs, theirs.box.id));
  });

  it('boxes: an update answers the box as a plain object and audits the old and new values; an unchanged update audits nothing', async () => {
    const b = await createBox(srv.ctx, admin, boxBody(mine.site.id));
    expectPlain(b);
    expect(await lastAudit('box.create', b.id)).toMatchObject({ userId: admin.userId, requestId: admin.requestId, customerId: mine.customer.id });
    const updated = await updateBox(srv.ctx, admin, { id: b.id, changes: { name: `${b.name} (renamed)`, highLimitC: 6 } });
    expectPlain(updated);
    expect(updated).toMatchObject({ name: `${b.name} (renamed)`, highLimitC: 6 });
    const entry = await lastAudit('box.update', b.id);
    expect(entry).toMatchObject({ userId: admin.userId, requestId: admin.requestId });
    expect(JSON.parse(String(entry?.detail))).toEqual({ changed: { name: `${b.name} (renamed)`, highLimitC: 6 }, was: { name: b.name, highLimitC: b.highLimitC } });
    const before = await srv.ctx.models.AuditEntry.count({ where: { action: 'box.update', entityId: String(b.id) } });
    expectPlain(await updateBox(srv.ctx, admin, { id: b.id, changes: { highLimitC: 6 } }));
    expect(await srv.ctx.models.AuditEntry.count({ where: { action: 'box.update', entityId: String(b.id) } })).toBe(before);
  });

  it('controllers: provision, rotate, disable, enable and a new gauge reference answer summaries without the secret hash, each audited', async () => {
    const b = await createBox(srv.ctx, admin, boxBody(mine.site.id));
    const provisioned = await provisionController(srv.ctx, admin, { boxId: b.id, serial: serial(), valveFullSteps: 1600, firmware: null, gaugeReference: 'vented-gauge' });
    expectPlain(provisioned);
    expect(provisioned.deviceSecret.length).toBeGreaterThan(16);
    expect(provisioned.controller).not.toHaveProperty('secretHash');
    const id = provisioned.controller.id;
    expect(await lastAudit('controller.create', id)).toMatchObject({ userId: admin.userId, requestId: admin.requestId, customerId: mine.customer.id });

    const rotated = await rotateControllerSecret(srv.ctx, admin, id);
    expectPlain(rotated);
    expect(rotated.deviceSecret).not.toBe(provisioned.deviceSecret);
    expect(await lastAudit('controller.rotate-secret', id)).toMatchObject({ userId: admin.userId });

    const off = await setControllerDisabled(srv.ctx, admin, { id, disabled: true });
    expectPlain(off);
    expect(off.disabled).toBe(true);
    expect(await lastAudit('controller.disable', id)).toMatchObject({ userId: admin.userId });
    expect((await setControllerDisabled(srv.ctx, admin, { id, disabled: false })).disabled).toBe(false);
    expect(await lastAudit('controller.enable', id)).toMatchObject({ userId: admin.userId });

    const sealed = await updateController(srv.ctx, admin, { id, changes: { gaugeReference: 'sealed-gauge' } });
    expectPlain(sealed);
    expect(sealed.gaugeReference).toBe('sealed-gauge');
    expect(JSON.parse(String((await lastAudit('controller.update', id))?.detail))).toMatchObject({ gaugeReference: { from: 'vented-gauge', to: 'sealed-gauge' } });
    expect((await problemOf(rotateControllerSecret(srv.ctx, admin, 999_999_999))).status).toBe(404);
  });
});
