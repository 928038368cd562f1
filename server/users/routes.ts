/** /api/v1/users (admin only): list, create with an invitation e-mail, edit role/scope, re-invite. Thin: the rules live in ./service.ts. */
import { Router, type Request } from 'express';
import { UserCreateBody, UserUpdateBody } from '../../shared/schemas/users';
import type { AppContext } from '../context';
import { parseBody, parseId } from '../http/validate';
import { parseListQuery } from '../http/list';
import { sentFields } from '../http/patch';
import { currentUser, requireRole } from '../auth/guards';
import { USER_LIST, createUser, getUser, listUsers, reinviteUser, updateUser, type Actor } from './service';

export { toUserDto } from './service';

function actorOf(req: Request): Actor {
  return { user: currentUser(req), requestId: typeof req.id === 'string' ? req.id : null };
}

/** The users router. */
export function userRoutes(ctx: AppContext): Router {
  const r = Router();
  r.use(requireRole('admin'));

  r.get('/', async (req, res) => {
    res.json(await listUsers(ctx, actorOf(req), parseListQuery(USER_LIST, req.query)));
  });

  r.get('/:id', async (req, res) => {
    res.json(await getUser(ctx, parseId(req)));
  });

  r.post('/', async (req, res) => {
    const body = parseBody(UserCreateBody, req);
    res.status(201).json(await createUser(ctx, actorOf(req), body));
  });

  r.patch('/:id', async (req, res) => {
    const id = parseId(req);
    const changes = sentFields(parseBody(UserUpdateBody, req), req.body);
    res.json(await updateUser(ctx, actorOf(req), { id, changes }));
  });

  r.post('/:id/invite', async (req, res) => {
    res.json(await reinviteUser(ctx, actorOf(req), parseId(req)));
  });

  return r;
}
