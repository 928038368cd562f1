/**
 * /api/v1/boxes: list (`?siteId=`, `?customerId=`) and get for every role, scoped to the tenant;
 * create and delete admin only; PATCH admin and technician. The telemetry routes under
 * /boxes/:id/... live in another router mounted on the same path.
 */
import { Router } from 'express';
import { BoxCreateBody, BoxUpdateBody, type BoxDto } from '../../shared/schemas/boxes';
import type { AppContext } from '../context';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { problems } from '../http/problem';
import { audit } from '../audit/service';
import { BOX_INCLUDE, BOX_LIST, createBox, deleteBox, listBoxes, loadScopedBox, maintenanceUntilByBox, toBoxDto, updateBox } from './service';

export { toBoxDto } from './service';

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
    res.json(await listBoxes(models, currentUser(req), parseListQuery(BOX_LIST, req.query)));
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
