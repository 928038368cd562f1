import { z } from 'zod';
import { ROLES, UNIT_SYSTEMS } from '../domain';
import type { SessionUser } from './auth';

const base = {
  email: z.string().trim().toLowerCase().email('Enter an e-mail address').max(190),
  name: z.string().trim().min(1, 'Enter a name').max(120),
  role: z.enum(ROLES),
  customerId: z.number().int().positive().nullable().default(null),
  unitSystem: z.enum(UNIT_SYSTEMS).default('imperial'),
};

const managerNeedsCustomer = (u: { role: string; customerId: number | null }) => u.role !== 'manager' || u.customerId !== null;
const msg = { message: 'A store manager must belong to one customer', path: ['customerId'] };

/** Admin creates a user; an invitation e-mail with a set-password link goes out. */
export const UserCreateBody = z.object(base).refine(managerNeedsCustomer, msg);
export type UserCreateBody = z.infer<typeof UserCreateBody>;

/**
 * Admin edits a user: only the fields sent are applied. No defaults here: a `.default()` under
 * `.partial()` still fills an absent field, which re-enabled disabled users and reset their units.
 */
export const UserUpdateBody = z
  .object({ email: base.email, name: base.name, role: base.role, customerId: z.number().int().positive().nullable(), unitSystem: z.enum(UNIT_SYSTEMS), disabled: z.boolean() })
  .partial()
  .refine((u) => u.role === undefined || u.role !== 'manager' || (u.customerId ?? null) !== null, msg);
export type UserUpdateBody = z.infer<typeof UserUpdateBody>;

/** A user as admins see it: the session fields plus account state. */
export interface UserDto extends SessionUser {
  disabled: boolean;
  invitedAt: string | null;
  passwordSet: boolean;
  lastLoginAt: string | null;
  createdAt: string;
}
