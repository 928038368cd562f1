/** /api/v1/controllers (admin only): list, provision (secret shown once), rotate the secret, disable, enable. */
import { Router } from 'express';
import { Op, type WhereOptions } from 'sequelize';
import { z } from 'zod';
import { ControllerCreateBody, ControllerUpdateBody, type ControllerSummary } from '../../shared/schemas/boxes';
import type { AppContext } from '../context';
import type { Controller } from '../models';
import { requireRole } from '../auth/guards';
import { pageOf, pageResult, parseBody, parseId, parseQuery } from '../http/validate';
import { contains } from '../http/search';
import { audit } from '../audit/service';
import { loadController, provisionController, rotateSecret, setDisabled, setGaugeReference, toControllerSummary } from './service';

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

const ControllerFilter = z.object({
  boxId: z.coerce.number().int().positive().optional(),
  customerId: z.coerce.number().int().positive().optional(),
});

/** The controllers router. */
export function controllerRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;
  r.use(requireRole('admin'));

  r.get('/', async (req, res) => {
    const p = pageOf(req);
    const filter = parseQuery(ControllerFilter, req);
    const where: WhereOptions<Controller>[] = [];
    if (filter.boxId !== undefined) where.push({ boxId: filter.boxId });
    if (filter.customerId !== undefined) where.push({ '$box.customer_id$': filter.customerId });
    if (p.q) where.push({ serial: contains(p.q) });
    const { rows, count } = await models.Controller.findAndCountAll({
      where: { [Op.and]: where },
      include: LIST_INCLUDE,
      order: [['serial', 'ASC']],
      limit: p.pageSize,
      offset: p.offset,
      distinct: true,
    });
    res.json(pageResult(rows.map((c: ControllerWithBox) => toControllerListItem(c)), count, p));
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
