/**
 * /api/v1/refrigerant-log/boxes/:boxId: the log of a system for every role in scope (404 out of
 * scope); `PUT …/system` and `POST …/entries` for technicians and admins.
 */
import { Router, type Request } from 'express';
import { RefrigerantEntryBody, RefrigerantSystemBody } from '../../shared/schemas/refrigerantLog';
import type { AppContext } from '../context';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { addRefrigerantEntry, getRefrigerantLog, setRefrigerantSystem, type RefrigerantLogDeps } from './service';

const deps = (ctx: AppContext, req: Request): RefrigerantLogDeps => ({ ctx, requestId: typeof req.id === 'string' ? req.id : null });
const writers = requireRole('technician', 'admin');

/** The refrigerant-log router. */
export function refrigerantLogRoutes(ctx: AppContext): Router {
  const r = Router();
  r.get('/boxes/:boxId', requireAuth, async (req, res) => {
    res.json(await getRefrigerantLog(ctx, currentUser(req), parseId(req, 'boxId')));
  });
  r.put('/boxes/:boxId/system', writers, async (req, res) => {
    const boxId = parseId(req, 'boxId');
    const body = parseBody(RefrigerantSystemBody, req);
    res.json(await setRefrigerantSystem(deps(ctx, req), currentUser(req), boxId, body));
  });
  r.post('/boxes/:boxId/entries', writers, async (req, res) => {
    const boxId = parseId(req, 'boxId');
    const body = parseBody(RefrigerantEntryBody, req);
    res.status(201).json(await addRefrigerantEntry(deps(ctx, req), currentUser(req), boxId, body));
  });
  return r;
}
