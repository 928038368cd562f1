/**
 * /api/v1/boxes: list (`?siteId=`, `?customerId=`) and get for every role, scoped to the tenant;
 * create and delete admin only; PATCH admin and technician. The telemetry routes under
 * /boxes/:id/... live in another router mounted on the same path.
 */
import { Router } from 'express';
import { Op, type WhereOptions } from 'sequelize';
import { z } from 'zod';
import { BoxCreateBody, BoxUpdateBody, type BoxDto } from '../../shared/schemas/boxes';
import type { RefrigerantId } from '../../shared/refrigerants';
import type { AppContext } from '../context';
import type { Box } from '../models';
import { currentUser, requireAuth, requireRole, scopeWhere } from '../auth/guards';
import { pageOf, pageResult, parseBody, parseId, parseQuery } from '../http/validate';
import { problems } from '../http/problem';
import { contains } from '../http/search';
import { audit } from '../audit/service';
import { toControllerSummary } from '../controllers/service';
import { BOX_INCLUDE, createBox, deleteBox, loadScopedBox, maintenanceUntilByBox, updateBox, type BoxWithRelations } from './service';

/** Presents a box with its site and customer names, its controller and its maintenance end (°C, K, minutes, hours). */
export function toBoxDto(b: BoxWithRelations, maintenanceUntil: Date | null): BoxDto {
  return {
    id: b.id,
    siteId: b.siteId,
    siteName: b.site?.name ?? '',
    customerId: b.customerId,
    customerName: b.customer?.name ?? '',
    name: b.name,
    kind: b.kind,
    setpointC: b.setpointC,
    differentialK: b.differentialK,
    highLimitC: b.highLimitC,
    lowLimitC: b.lowLimitC,
    alarmDelayMin: b.alarmDelayMin,
    doorAlarmDelayMin: b.doorAlarmDelayMin,
    // The column is only ever written through the REFRIGERANT_IDS enum of the box schemas.
    refrigerant: b.refrigerant as RefrigerantId,
    valveType: b.valveType,
    saturationMethod: b.saturationMethod,
    superheatTargetK: b.superheatTargetK,
    defrostType: b.defrostType,
    defrostIntervalH: b.defrostIntervalH,
    defrostMaxMin: b.defrostMaxMin,
    defrostTerminationC: b.defrostTerminationC,
    dripMin: b.dripMin,
    fanDelayMin: b.fanDelayMin,
    controller: b.controller ? toControllerSummary(b.controller) : null,
    maintenanceUntil: maintenanceUntil ? maintenanceUntil.toISOString() : null,
    createdAt: b.createdAt.toISOString(),
    updatedAt: b.updatedAt.toISOString(),
  };
}

const BoxFilter = z.object({
  siteId: z.coerce.number().int().positive().optional(),
  customerId: z.coerce.number().int().positive().optional(),
});

/** The boxes router (CRUD only). */
export function boxRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  async function reload(id: number): Promise<BoxDto> {
    const b = await models.Box.findByPk(id, { include: BOX_INCLUDE });
    if (!b) throw problems.notFound('box');
    return toBoxDto(b, (await maintenanceUntilByBox(models, [b.id])).get(b.id) ?? null);
  }

  r.get('/', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const p = pageOf(req);
    const filter = parseQuery(BoxFilter, req);
    const where: WhereOptions<Box>[] = [scopeWhere(user)];
    if (filter.siteId !== undefined) where.push({ siteId: filter.siteId });
    if (filter.customerId !== undefined) where.push({ customerId: filter.customerId });
    if (p.q) where.push({ [Op.or]: [{ name: contains(p.q) }, { '$site.name$': contains(p.q) }] });
    const { rows, count } = await models.Box.findAndCountAll({
      where: { [Op.and]: where },
      include: BOX_INCLUDE,
      order: [['name', 'ASC'], ['id', 'ASC']],
      limit: p.pageSize,
      offset: p.offset,
      distinct: true,
    });
    const until = await maintenanceUntilByBox(models, rows.map((b) => b.id));
    res.json(pageResult(rows.map((b: BoxWithRelations) => toBoxDto(b, until.get(b.id) ?? null)), count, p));
  });

  r.get('/:id', requireAuth, async (req, res) => {
    const b = await loadScopedBox(models, currentUser(req), parseId(req));
    res.json(toBoxDto(b, (await maintenanceUntilByBox(models, [b.id])).get(b.id) ?? null));
  });

  r.post('/', requireRole('admin'), async (req, res) => {
    const body = parseBody(BoxCreateBody, req);
    const b = await createBox(models, body);
    await audit(models, req, { action: 'box.create', entityType: 'box', entityId: b.id, customerId: b.customerId, detail: body });
    res.status(201).json(await reload(b.id));
  });

  r.patch('/:id', requireRole('admin', 'technician'), async (req, res) => {
    const user = currentUser(req);
    const id = parseId(req);
    const body = parseBody(BoxUpdateBody, req);
    const b = await loadScopedBox(models, user, id);
    const { changed, was, now } = await updateBox(models, user, b, body);
    if (changed.length > 0) {
      ctx.bus.emit('boxChanged', { boxId: b.id });
      await audit(models, req, { action: 'box.update', entityType: 'box', entityId: b.id, customerId: b.customerId, detail: { changed: now, was } });
    }
    res.json(await reload(b.id));
  });

  r.delete('/:id', requireRole('admin'), async (req, res) => {
    const b = await loadScopedBox(models, currentUser(req), parseId(req));
    const serial = await deleteBox(ctx, b);
    ctx.bus.emit('boxChanged', { boxId: b.id });
    await audit(models, req, { action: 'box.delete', entityType: 'box', entityId: b.id, customerId: b.customerId, detail: { name: b.name, siteId: b.siteId, controllerSerial: serial } });
    res.status(204).end();
  });

  return r;
}
