/** Route guards and tenant scoping. Every route that reads tenant data goes through scopeWhere(). */
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

/** A `where` fragment limiting rows with a `customerId` column to the user's tenant. */
export function scopeWhere(user: SessionUser): { customerId?: number } {
  if (user.role === 'manager') {
    // A manager without a customer sees nothing (customer id 0 never exists).
    return { customerId: user.customerId ?? 0 };
  }
  return {};
}

/** True when the user may see rows of this customer. */
export function canSeeCustomer(user: SessionUser, customerId: number): boolean {
  return user.role !== 'manager' || user.customerId === customerId;
}
