/**
 * Tenant scope, in one place: a store manager sees only their own customer's rows; technicians and
 * admins see every customer. Routes and services filter with scopeWhere(), raw SQL with
 * scopeSql(), and the live hub with canSeeCustomer(). A manager without a customer sees nothing
 * (customer id 0 never exists), so a half-made account leaks nothing.
 */
import type { SessionUser } from '../../shared/schemas/auth';

/** The customer id a user is limited to, or null when the user sees every customer. */
export function scopedCustomerId(user: Pick<SessionUser, 'role' | 'customerId'>): number | null {
  return user.role === 'manager' ? (user.customerId ?? 0) : null;
}

/** A Sequelize `where` fragment limiting rows with a `customerId` attribute to the user's tenant. */
export function scopeWhere(user: Pick<SessionUser, 'role' | 'customerId'>): { customerId?: number } {
  const id = scopedCustomerId(user);
  return id === null ? {} : { customerId: id };
}

/**
 * A raw-SQL condition on `column` (e.g. `b.customer_id`) with its positional replacements; the
 * condition is `1=1` for users who see every customer. `column` is code, never user input.
 */
export function scopeSql(user: Pick<SessionUser, 'role' | 'customerId'>, column: string): { sql: string; replacements: number[] } {
  const id = scopedCustomerId(user);
  return id === null ? { sql: '1=1', replacements: [] } : { sql: `${column} = ?`, replacements: [id] };
}

/** True when the user may see rows of this customer. */
export function canSeeCustomer(user: Pick<SessionUser, 'role' | 'customerId'>, customerId: number): boolean {
  const id = scopedCustomerId(user);
  return id === null || id === customerId;
}
