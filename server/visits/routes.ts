/**
 * /api/v1/visits (list, detail for every role in scope; create, change, close and attach for
 * technicians and admins) and /api/v1/attachments/:id[/thumb] (in scope of the visit, else 404).
 */
import { Router, type Request } from 'express';
import { VisitCloseBody, VisitCreateBody, VisitListQuery, VisitUpdateBody } from '../../shared/schemas/visits';
import type { AppContext } from '../context';
import type { ServiceVisit } from '../models/records';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { pageOf, pageResult, parseBody, parseId, parseQuery } from '../http/validate';
import { closeVisit, createVisit, listVisits, loadScopedVisit, toVisitDto, updateVisit, type VisitDeps } from './service';
import { receiveFiles, sendAttachment, storeAttachments } from './attachments';

const deps = (ctx: AppContext, req: Request): VisitDeps => ({ ctx, requestId: typeof req.id === 'string' ? req.id : null });
const writers = requireRole('technician', 'admin');

/** The visits router. */
export function visitRoutes(ctx: AppContext): Router {
  const r = Router();

  r.get('/', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const filter = parseQuery(VisitListQuery, req);
    const p = pageOf(req);
    const { items, total } = await listVisits(ctx, user, filter, p);
    res.json(pageResult(items, total, p));
  });

  r.post('/', writers, async (req, res) => {
    const body = parseBody(VisitCreateBody, req);
    res.status(201).json(await createVisit(deps(ctx, req), currentUser(req), body));
  });

  r.get('/:id', requireAuth, async (req, res) => {
    const v = await loadScopedVisit(ctx, currentUser(req), parseId(req));
    res.json(await toVisitDto(ctx, v));
  });

  r.patch('/:id', writers, async (req, res) => {
    const id = parseId(req);
    const body = parseBody(VisitUpdateBody, req);
    res.json(await updateVisit(deps(ctx, req), currentUser(req), id, body));
  });

  r.post('/:id/close', writers, async (req, res) => {
    const id = parseId(req);
    const body = parseBody(VisitCloseBody, req);
    res.json(await closeVisit(deps(ctx, req), currentUser(req), id, body.acknowledgeAlarms));
  });

  // The visit is loaded (and scoped) before the body is read, so nothing is received for a visit out of scope.
  const upload = receiveFiles(ctx);
  const loaded = new WeakMap<Request, ServiceVisit>();
  r.post(
    '/:id/attachments',
    writers,
    async (req, res, next) => {
      loaded.set(req, await loadScopedVisit(ctx, currentUser(req), parseId(req)));
      next();
    },
    upload,
    async (req, res) => {
      const visit = loaded.get(req);
      if (!visit) throw new Error('visit not loaded before the upload');
      const files = Array.isArray(req.files) ? req.files : [];
      res.status(201).json(await storeAttachments(deps(ctx, req), currentUser(req), visit, files));
    },
  );

  return r;
}

/** The attachments router: the file and its thumbnail. */
export function attachmentRoutes(ctx: AppContext): Router {
  const r = Router();
  r.get('/:id', requireAuth, async (req, res) => {
    await sendAttachment(ctx, currentUser(req), parseId(req), 'file', res);
  });
  r.get('/:id/thumb', requireAuth, async (req, res) => {
    await sendAttachment(ctx, currentUser(req), parseId(req), 'thumb', res);
  });
  return r;
}
