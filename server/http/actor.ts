/**
 * Who calls a use case: the signed-in user (for the tenant scope and the role rules) and what the
 * audit trail records (user id, request id). Routes build it from the request; services take it
 * with their input and never see the request.
 */
import type { Request } from 'express';
import type { SessionUser } from '../../shared/schemas/auth';
import type { AuditActor } from '../audit/service';
import { currentUser } from '../auth/guards';

export interface Actor extends AuditActor {
  user: SessionUser;
}

/** The actor of a signed-in request (a route behind requireAuth or requireRole). */
export function actorOf(req: Request): Actor {
  const user = currentUser(req);
  return { user, userId: user.id, requestId: typeof req.id === 'string' ? req.id : null };
}
