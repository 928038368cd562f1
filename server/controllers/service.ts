/** Controller provisioning (admin only): create with a one-time secret, rotate it, disable and enable. */
import { Op, UniqueConstraintError } from 'sequelize';
import type { ControllerCreateBody, ControllerSummary, GaugeReference } from '../../shared/schemas/boxes';
import type { AppContext } from '../context';
import type { Controller } from '../models';
import { problems } from '../http/problem';
import { hashDeviceSecret, newDeviceSecret } from './secrets';

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

/** Provisions a controller for a box that has none; 422 for an unknown box, 409 for a taken box or serial. */
export async function provisionController(ctx: AppContext, body: ControllerCreateBody): Promise<ProvisionResult> {
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
  await c.update({ secretHash: hashDeviceSecret(deviceSecret), secretRotatedAt: new Date() });
  ctx.bus.emit('controllerRevoked', { serial: c.serial, reason: 'rotated' });
  return { controller: c, deviceSecret };
}

/** Disables or enables a controller; disabling revokes its broker connection. */
export async function setDisabled(ctx: AppContext, c: Controller, disabled: boolean): Promise<Controller> {
  await c.update({ disabled });
  if (disabled) ctx.bus.emit('controllerRevoked', { serial: c.serial, reason: 'disabled' });
  return c;
}

/** Sets the declared reference of the controller's transducers; the ingest converts by it from now on. */
export async function setGaugeReference(ctx: AppContext, c: Controller, gaugeReference: GaugeReference): Promise<Controller> {
  if (c.gaugeReference === gaugeReference) return c;
  await c.update({ gaugeReference });
  ctx.bus.emit('boxChanged', { boxId: c.boxId });
  return c;
}
