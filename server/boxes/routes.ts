/**
 * /api/v1/boxes: list (`?siteId=`, `?customerId=`) and get for every role, scoped to the tenant;
 * create and delete admin only; PATCH admin and technician. The telemetry routes under
 * /boxes/:id/... live in another router mounted on the same path. Thin: the rules live in ./service.ts.
 */
import { Router } from 'express';
import { BoxCreateBody, BoxUpdateBody } from '../../shared/schemas/boxes';
import type { AppContext } from '../context';
import { requireAuth, requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { actorOf } from '../http/actor';
import { BOX_LIST, createBox, deleteBox, getBox, listBoxes, updateBox } from './service';

export { toBoxDto } from './service';

/** The boxes router (CRUD only). */
export function boxRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  r.get('/', requireAuth, async (req, res) => {
    res.json(await listBoxes(models, actorOf(req).user, parseListQuery(BOX_LIST, req.query)));
  });

  r.get('/:id', requireAuth, async (req, res) => {
    res.json(await getBox(models, actorOf(req), parseId(req)));
  });

  r.post('/', requireRole('admin'), async (req, res) => {
    res.status(201).json(await createBox(ctx, actorOf(req), parseBody(BoxCreateBody, req)));
  });

  r.patch('/:id', requireRole('admin', 'technician'), async (req, res) => {
    const id = parseId(req);
    res.json(await updateBox(ctx, actorOf(req), { id, changes: parseBody(BoxUpdateBody, req) }));
  });

  r.delete('/:id', requireRole('admin'), async (req, res) => {
    await deleteBox(ctx, actorOf(req), parseId(req));
    res.status(204).end();
  });

  return r;
}
