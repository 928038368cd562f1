/** Route guards. Tenant scope (scopeWhere, scopeSql, canSeeCustomer) lives in ./scope.ts and is re-exported here. */
import type { Request, RequestHandler } from 'express';
import type { Role } from '../../shared/domain';
import type { SessionUser } from '../../shared/schemas/auth';
import { problems } from '../http/problem';

/** The signed-in user, or a 401 problem. */
export function currentUser(req: Request): SessionUser {
  if (!req.isAuthenticated?.() || !req.user) throw problems.unauthenticated();
  return req.user;
}

/** Middleware: signed in, with one of the roles (any role when none given). */
export function requireRole(...roles: Role[]): RequestHandler {
  return (req, _res, next) => {
    const user = currentUser(req);
    if (roles.length > 0 && !roles.includes(user.role)) return next(problems.forbidden());
    next();
  };
}

export const requireAuth = requireRole();

// Tenant scope lives in ./scope.ts; re-exported so existing imports keep working.
export { canSeeCustomer, scopeSql, scopeWhere, scopedCustomerId } from './scope';
