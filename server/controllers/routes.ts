/** /api/v1/controllers (admin only): list, provision (secret shown once), rotate the secret, disable, enable. */
import { Router } from 'express';
import { ControllerCreateBody, ControllerUpdateBody } from '../../shared/schemas/boxes';
import type { AppContext } from '../context';
import type { Controller } from '../models';
import { currentUser, requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { audit } from '../audit/service';
import { CONTROLLER_LIST, listControllers, loadController, provisionController, rotateSecret, setDisabled, setGaugeReference, toControllerSummary } from './service';

export { toControllerListItem, type ControllerListItem } from './service';

/** The controllers router. */
export function controllerRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;
  r.use(requireRole('admin'));

  r.get('/', async (req, res) => {
    res.json(await listControllers(ctx, currentUser(req), parseListQuery(CONTROLLER_LIST, req.query)));
  });

  r.post('/', async (req, res) => {
    const body = parseBody(ControllerCreateBody, req);
    const { controller, deviceSecret } = await provisionController(ctx, body);
    const box = await models.Box.findByPk(controller.boxId, { attributes: ['customerId'] });
    await audit(models, req, {
      action: 'controller.create',
      entityType: 'controller',
      entityId: controller.id,
      customerId: box?.customerId ?? null,
      detail: { serial: controller.serial, boxId: controller.boxId, valveFullSteps: controller.valveFullSteps, firmware: controller.firmware },
    });
    res.status(201).json({ controller: toControllerSummary(controller), deviceSecret });
  });

  async function auditAction(req: Parameters<typeof audit>[1], action: string, c: Controller) {
    const box = await models.Box.findByPk(c.boxId, { attributes: ['customerId'] });
    await audit(models, req, { action, entityType: 'controller', entityId: c.id, customerId: box?.customerId ?? null, detail: { serial: c.serial, boxId: c.boxId } });
  }

  r.post('/:id/rotate-secret', async (req, res) => {
    const c = await loadController(ctx, parseId(req));
    const { controller, deviceSecret } = await rotateSecret(ctx, c);
    await auditAction(req, 'controller.rotate-secret', controller);
    res.json({ controller: toControllerSummary(controller), deviceSecret });
  });

  r.post('/:id/disable', async (req, res) => {
    const c = await setDisabled(ctx, await loadController(ctx, parseId(req)), true);
    await auditAction(req, 'controller.disable', c);
    res.json(toControllerSummary(c));
  });

  r.patch('/:id', async (req, res) => {
    const body = parseBody(ControllerUpdateBody, req);
    const c = await loadController(ctx, parseId(req));
    const before = c.gaugeReference;
    await setGaugeReference(ctx, c, body.gaugeReference);
    const box = await models.Box.findByPk(c.boxId, { attributes: ['customerId'] });
    await audit(models, req, { action: 'controller.update', entityType: 'controller', entityId: c.id, customerId: box?.customerId ?? null, detail: { serial: c.serial, gaugeReference: { from: before, to: c.gaugeReference } } });
    res.json(toControllerSummary(c));
  });

  r.post('/:id/enable', async (req, res) => {
    const c = await setDisabled(ctx, await loadController(ctx, parseId(req)), false);
    await auditAction(req, 'controller.enable', c);
    res.json(toControllerSummary(c));
  });

  return r;
}
