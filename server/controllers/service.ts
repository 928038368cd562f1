/**
 * Controller provisioning (admin only): create with a one-time secret, rotate it, disable and enable,
 * set the gauge reference. The use cases (`provisionController`, `rotateControllerSecret`,
 * `setControllerDisabled`, `updateController`) take the actor and their input, audit, and answer
 * plain objects; `rotateSecret`, `setDisabled` and `setGaugeReference` are their steps on a loaded row.
 */
import { Op, UniqueConstraintError, type WhereOptions } from 'sequelize';
import { z } from 'zod';
import type { ControllerCreateBody, ControllerSummary, GaugeReference } from '../../shared/schemas/boxes';
import type { SessionUser } from '../../shared/schemas/auth';
import type { Page } from '../../shared/schemas/common';
import type { AppContext } from '../context';
import type { Controller } from '../models';
import { problems } from '../http/problem';
import { defineList, runList, scopeByCustomer, type ListInputOf } from '../http/list';
import { hashDeviceSecret, newDeviceSecret } from './secrets';
import type { Actor } from '../http/actor';
import { auditBy } from '../audit/service';

/** Presents a controller without its secret hash. */
export function toControllerSummary(c: Controller): ControllerSummary {
  return {
    id: c.id,
    serial: c.serial,
    valveFullSteps: c.valveFullSteps,
    firmware: c.firmware,
    gaugeReference: c.gaugeReference,
    lastSeenAt: c.lastSeenAt?.toISOString() ?? null,
    online: c.online,
    disabled: c.disabled,
  };
}

/** A row of GET /controllers: the summary plus where the controller is installed. */
export interface ControllerListItem extends ControllerSummary {
  boxId: number;
  boxName: string;
  siteId: number;
  siteName: string;
  customerId: number;
  customerName: string;
  secretRotatedAt: string | null;
  createdAt: string;
}

type ControllerWithBox = Controller & {
  box?: { id: number; name: string; siteId: number; customerId: number; site?: { name: string }; customer?: { name: string } };
};

const LIST_INCLUDE = [
  {
    association: 'box',
    attributes: ['id', 'name', 'siteId', 'customerId'],
    include: [
      { association: 'site', attributes: ['id', 'name'] },
      { association: 'customer', attributes: ['id', 'name'] },
    ],
  },
];

/** Presents a controller row of the admin list. */
export function toControllerListItem(c: ControllerWithBox): ControllerListItem {
  return {
    ...toControllerSummary(c),
    boxId: c.boxId,
    boxName: c.box?.name ?? '',
    siteId: c.box?.siteId ?? 0,
    siteName: c.box?.site?.name ?? '',
    customerId: c.box?.customerId ?? 0,
    customerName: c.box?.customer?.name ?? '',
    secretRotatedAt: c.secretRotatedAt?.toISOString() ?? null,
    createdAt: c.createdAt.toISOString(),
  };
}

const ControllerFilters = {
  boxId: z.coerce.number().int().positive().optional(),
  customerId: z.coerce.number().int().positive().optional(),
};

/** GET /controllers: `?boxId=`, `?customerId=`, searched by serial, box or site name, sorted by serial (default), box, last contact or creation. */
export const CONTROLLER_LIST = defineList<Controller, 'serial' | 'boxName' | 'lastSeenAt' | 'createdAt', typeof ControllerFilters>({
  sorts: { serial: ['serial'], boxName: ['box', 'name'], lastSeenAt: ['lastSeenAt'], createdAt: ['createdAt'] },
  defaultSort: 'serial',
  search: (like) => ({ [Op.or]: [{ serial: like }, { '$box.name$': like }, { '$box.site.name$': like }] }),
  filters: ControllerFilters,
  filterWhere: (f) => {
    const out: WhereOptions<Controller>[] = [];
    if (f.boxId !== undefined) out.push({ boxId: f.boxId });
    if (f.customerId !== undefined) out.push({ '$box.customer_id$': f.customerId });
    return out;
  },
  // Admin only today; scoped anyway so the list stays safe if another role is ever let in.
  scope: scopeByCustomer<Controller>('$box.customer_id$'),
  include: LIST_INCLUDE,
});

/** One page of controllers with where each is installed. */
export async function listControllers(ctx: AppContext, actor: SessionUser, input: ListInputOf<typeof CONTROLLER_LIST>): Promise<Page<ControllerListItem>> {
  return runList(ctx.models.Controller, CONTROLLER_LIST, actor, input, (rows) => rows.map((c: ControllerWithBox) => toControllerListItem(c)));
}

/** A freshly provisioned or rotated controller and its device secret, which is shown only this once. */
export interface ProvisionResult {
  controller: Controller;
  deviceSecret: string;
}

/** Loads a controller by id (admin routes: no tenant scope), or a 404 problem. */
export async function loadController(ctx: AppContext, id: number): Promise<Controller> {
  const c = await ctx.models.Controller.findByPk(id);
  if (!c) throw problems.notFound('controller');
  return c;
}

/** What the admin sees once after provisioning or rotating: the controller and its device secret. */
export interface ProvisionAnswer {
  controller: ControllerSummary;
  deviceSecret: string;
}

async function auditController(ctx: AppContext, actor: Actor, action: string, c: Controller, detail: unknown): Promise<void> {
  const box = await ctx.models.Box.findByPk(c.boxId, { attributes: ['customerId'] });
  await auditBy(ctx.models, actor, { action, entityType: 'controller', entityId: c.id, customerId: box?.customerId ?? null, detail });
}

/** Provisions a controller for a box that has none and audits it; 422 for an unknown box, 409 for a taken box or serial. */
export async function provisionController(ctx: AppContext, actor: Actor, body: ControllerCreateBody): Promise<ProvisionAnswer> {
  const { controller, deviceSecret } = await createController(ctx, body);
  await auditController(ctx, actor, 'controller.create', controller, { serial: controller.serial, boxId: controller.boxId, valveFullSteps: controller.valveFullSteps, firmware: controller.firmware });
  return { controller: toControllerSummary(controller), deviceSecret };
}

/** Replaces the secret of a controller (404 when unknown) and audits it; the new secret is answered once. */
export async function rotateControllerSecret(ctx: AppContext, actor: Actor, id: number): Promise<ProvisionAnswer> {
  const { controller, deviceSecret } = await rotateSecret(ctx, await loadController(ctx, id));
  await auditController(ctx, actor, 'controller.rotate-secret', controller, { serial: controller.serial, boxId: controller.boxId });
  return { controller: toControllerSummary(controller), deviceSecret };
}

/** Disables or enables a controller (404 when unknown) and audits it. */
export async function setControllerDisabled(ctx: AppContext, actor: Actor, input: { id: number; disabled: boolean }): Promise<ControllerSummary> {
  const c = await setDisabled(ctx, await loadController(ctx, input.id), input.disabled);
  await auditController(ctx, actor, input.disabled ? 'controller.disable' : 'controller.enable', c, { serial: c.serial, boxId: c.boxId });
  return toControllerSummary(c);
}

/** Changes a controller's gauge reference (404 when unknown) and audits the change from and to. */
export async function updateController(ctx: AppContext, actor: Actor, input: { id: number; changes: { gaugeReference: GaugeReference } }): Promise<ControllerSummary> {
  const c = await loadController(ctx, input.id);
  const before = c.gaugeReference;
  await setGaugeReference(ctx, c, input.changes.gaugeReference);
  await auditController(ctx, actor, 'controller.update', c, { serial: c.serial, gaugeReference: { from: before, to: c.gaugeReference } });
  return toControllerSummary(c);
}

/** Creates a controller row and its broker account for a box that has none; 422 for an unknown box, 409 for a taken box or serial. */
async function createController(ctx: AppContext, body: ControllerCreateBody): Promise<ProvisionResult> {
  const { models } = ctx;
  const box = await models.Box.findByPk(body.boxId);
  if (!box) throw problems.unprocessable('unknown-box', 'Unknown box', `Box ${body.boxId} does not exist.`, { boxId: ['Unknown box'] });
  const clash = await models.Controller.findOne({ where: { [Op.or]: [{ boxId: body.boxId }, { serial: body.serial }] } });
  if (clash?.boxId === body.boxId) throw problems.conflict(`Box "${box.name}" already has controller ${clash.serial}; disable or rotate that one instead.`);
  if (clash) throw problems.conflict(`Serial ${body.serial} is already provisioned.`);
  const deviceSecret = newDeviceSecret();
  try {
    const controller = await models.Controller.create({
      boxId: body.boxId,
      serial: body.serial,
      secretHash: hashDeviceSecret(deviceSecret),
      valveFullSteps: body.valveFullSteps,
      firmware: body.firmware,
      gaugeReference: body.gaugeReference,
      lastSeenAt: null,
      secretRotatedAt: null,
    });
    try {
      await ctx.deviceAccounts?.provision(controller.serial, deviceSecret);
    } catch (err) {
      // No broker account, no controller: the secret would be shown for an account that cannot sign in.
      await controller.destroy();
      throw brokerUnavailable(ctx, err);
    }
    return { controller, deviceSecret };
  } catch (err) {
    // Two admins racing for the same box or serial: the unique keys decide.
    if (err instanceof UniqueConstraintError) throw problems.conflict(`Box ${body.boxId} already has a controller, or serial ${body.serial} is taken.`);
    throw err;
  }
}

/** Replaces the device secret; the old one stops working and the broker drops the connection. */
export async function rotateSecret(ctx: AppContext, c: Controller): Promise<ProvisionResult> {
  const deviceSecret = newDeviceSecret();
  // mosquitto first: when it cannot take the new secret, nothing changes and the old one keeps working.
  await ctx.deviceAccounts?.setSecret(c.serial, deviceSecret).catch((err: unknown) => Promise.reject(brokerUnavailable(ctx, err)));
  await c.update({ secretHash: hashDeviceSecret(deviceSecret), secretRotatedAt: new Date() });
  ctx.bus.emit('controllerRevoked', { serial: c.serial, reason: 'rotated' });
  return { controller: c, deviceSecret };
}

/** Disables or enables a controller; disabling revokes its broker connection. */
export async function setDisabled(ctx: AppContext, c: Controller, disabled: boolean): Promise<Controller> {
  await ctx.deviceAccounts?.setEnabled(c.serial, !disabled).catch((err: unknown) => Promise.reject(brokerUnavailable(ctx, err)));
  await c.update({ disabled });
  if (disabled) ctx.bus.emit('controllerRevoked', { serial: c.serial, reason: 'disabled' });
  return c;
}

/** The 503 answer when mosquitto's account manager fails (MQTT_BROKER=mosquitto); logs the cause. */
function brokerUnavailable(ctx: AppContext, err: unknown) {
  ctx.logger.error({ err: (err as Error).message }, 'mosquitto account change failed');
  return problems.unavailable('The MQTT broker did not take the account change; nothing was changed. Try again in a moment.');
}

/** Sets the declared reference of the controller's transducers; the ingest converts by it from now on. */
export async function setGaugeReference(ctx: AppContext, c: Controller, gaugeReference: GaugeReference): Promise<Controller> {
  if (c.gaugeReference === gaugeReference) return c;
  await c.update({ gaugeReference });
  ctx.bus.emit('boxChanged', { boxId: c.boxId });
  return c;
}
