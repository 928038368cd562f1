/** /api/v1/controllers (admin only): list, provision (secret shown once), rotate the secret, disable, enable. Thin: the rules live in ./service.ts. */
import { Router } from 'express';
import { ControllerCreateBody, ControllerUpdateBody } from '../../shared/schemas/boxes';
import type { AppContext } from '../context';
import { requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { actorOf } from '../http/actor';
import { CONTROLLER_LIST, listControllers, provisionController, rotateControllerSecret, setControllerDisabled, updateController } from './service';

export { toControllerListItem, type ControllerListItem } from './service';

/** The controllers router. */
export function controllerRoutes(ctx: AppContext): Router {
  const r = Router();
  r.use(requireRole('admin'));

  r.get('/', async (req, res) => {
    res.json(await listControllers(ctx, actorOf(req).user, parseListQuery(CONTROLLER_LIST, req.query)));
  });

  r.post('/', async (req, res) => {
    res.status(201).json(await provisionController(ctx, actorOf(req), parseBody(ControllerCreateBody, req)));
  });

  r.post('/:id/rotate-secret', async (req, res) => {
    res.json(await rotateControllerSecret(ctx, actorOf(req), parseId(req)));
  });

  r.post('/:id/disable', async (req, res) => {
    res.json(await setControllerDisabled(ctx, actorOf(req), { id: parseId(req), disabled: true }));
  });

  r.patch('/:id', async (req, res) => {
    const body = parseBody(ControllerUpdateBody, req);
    res.json(await updateController(ctx, actorOf(req), { id: parseId(req), changes: body }));
  });

  r.post('/:id/enable', async (req, res) => {
    res.json(await setControllerDisabled(ctx, actorOf(req), { id: parseId(req), disabled: false }));
  });

  return r;
}
