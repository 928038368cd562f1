/** Users (admin only): list, create with an invitation, edit role/scope/account state, re-invite. */
import { Op } from 'sequelize';
import type { SessionUser } from '../../shared/schemas/auth';
import type { UserCreateBody, UserDto, UserUpdateBody } from '../../shared/schemas/users';
import type { Page } from '../../shared/schemas/common';
import type { AppContext } from '../context';
import type { Models, User } from '../models';
import { auditBy, type AuditInput } from '../audit/service';
import { problems } from '../http/problem';
import { changedKeys } from '../http/patch';
import { defineList, noScope, runList, type ListInputOf } from '../http/list';
import { sendInvitation } from './invite';

/** Who acts: the signed-in admin and the request id for the audit trail. */
export interface Actor {
  user: SessionUser;
  requestId: string | null;
}

/** What the user use cases need from the app. */
export type UserDeps = AppContext;

/** Presents a user row (never the hashes). */
export function toUserDto(u: User): UserDto {
  return {
    id: u.id,
    email: u.email,
    name: u.name,
    role: u.role,
    customerId: u.customerId,
    unitSystem: u.unitSystem,
    disabled: u.disabled,
    invitedAt: u.invitedAt?.toISOString() ?? null,
    passwordSet: u.passwordHash !== null,
    lastLoginAt: u.lastLoginAt?.toISOString() ?? null,
    createdAt: u.createdAt.toISOString(),
  };
}

/** Fields whose change makes a live socket's copy of the user stale. */
const ACCESS_FIELDS = ['role', 'customerId', 'disabled'] as const;

function auditAs(models: Models, actor: Actor, e: AuditInput): Promise<void> {
  return auditBy(models, { userId: actor.user.id, requestId: actor.requestId }, e);
}

async function loadUser(models: Models, id: number): Promise<User> {
  const u = await models.User.findByPk(id);
  if (!u) throw problems.notFound('user');
  return u;
}

async function assertCustomer(models: Models, customerId: number | null | undefined): Promise<void> {
  if (customerId != null && !(await models.Customer.findByPk(customerId))) {
    throw problems.unprocessable('unknown-customer', 'Unknown customer', `Customer ${customerId} does not exist.`, { customerId: ['Unknown customer'] });
  }
}

async function assertEmailFree(models: Models, email: string, exceptId: number | null): Promise<void> {
  const other = await models.User.findOne({ where: { email } });
  if (other && other.id !== exceptId) throw problems.conflict(`A user with e-mail ${email} already exists.`);
}

/** GET /users (admin only, every tenant): searched by e-mail or name, sorted by name (default), e-mail, role or last sign-in. */
export const USER_LIST = defineList<User, 'name' | 'email' | 'role' | 'lastLoginAt'>({
  sorts: { name: ['name'], email: ['email'], role: ['role'], lastLoginAt: ['lastLoginAt'] },
  defaultSort: 'name',
  search: (like) => ({ [Op.or]: [{ email: like }, { name: like }] }),
  scope: noScope,
});

/** One page of users for the admin list. */
export async function listUsers(deps: UserDeps, actor: Actor, input: ListInputOf<typeof USER_LIST>): Promise<Page<UserDto>> {
  return runList(deps.models.User, USER_LIST, actor.user, input, (rows) => rows.map(toUserDto));
}

/** One user, or a 404 problem. */
export async function getUser(deps: UserDeps, id: number): Promise<UserDto> {
  return toUserDto(await loadUser(deps.models, id));
}

/** Creates a user without a password and mails the invitation; 409 on a taken e-mail. */
export async function createUser(deps: UserDeps, actor: Actor, body: UserCreateBody): Promise<UserDto> {
  await assertCustomer(deps.models, body.customerId);
  await assertEmailFree(deps.models, body.email, null);
  const u = await deps.models.User.create({
    ...body,
    customerId: body.role === 'manager' ? body.customerId : null,
    passwordHash: null,
    inviteTokenHash: null,
    inviteExpiresAt: null,
    invitedAt: null,
    lastLoginAt: null,
    lockedUntil: null,
  });
  await sendInvitation(deps, u);
  await auditAs(deps.models, actor, { action: 'user.create', entityType: 'user', entityId: u.id, customerId: u.customerId, detail: { role: u.role } });
  return toUserDto(u);
}

/**
 * Applies the sent fields (`changes` holds only keys the client sent). Admins cannot disable
 * themselves or drop their own admin role (409). A change of role, customer or account state
 * closes the user's live sockets (bus `userAccessChanged`; disabling also ends the session).
 */
export async function updateUser(deps: UserDeps, actor: Actor, input: { id: number; changes: Partial<UserUpdateBody> }): Promise<UserDto> {
  const { models, bus } = deps;
  const u = await loadUser(models, input.id);
  const { changes } = input;
  const role = changes.role ?? u.role;
  const requestedCustomerId = changes.customerId !== undefined ? changes.customerId : u.customerId;
  if (role === 'manager' && requestedCustomerId === null) {
    throw problems.unprocessable('manager-needs-customer', 'Customer required', 'A store manager must belong to one customer.', { customerId: ['Required for managers'] });
  }
  if (changes.customerId !== undefined) await assertCustomer(models, changes.customerId);
  if (changes.email !== undefined && changes.email !== u.email) await assertEmailFree(models, changes.email, u.id);
  if (u.id === actor.user.id && (changes.disabled === true || (changes.role !== undefined && changes.role !== 'admin'))) {
    throw problems.conflict('You cannot disable yourself or remove your own admin role.');
  }
  // Only managers carry a customer: moving someone off the manager role clears it.
  const customerId = role === 'manager' ? requestedCustomerId : null;
  const updates: Partial<UserUpdateBody> = { ...changes };
  if (customerId !== u.customerId) updates.customerId = customerId;
  else delete updates.customerId;
  const changed = changedKeys(updates, { email: u.email, name: u.name, role: u.role, customerId: u.customerId, unitSystem: u.unitSystem, disabled: u.disabled });
  if (changed.length > 0) await u.update(updates);
  const access = ACCESS_FIELDS.filter((k) => changed.includes(k));
  if (changed.includes('disabled') && u.disabled) bus.emit('userSessionEnded', { userId: u.id });
  if (access.length > 0) bus.emit('userAccessChanged', { userId: u.id, changed: access });
  await auditAs(models, actor, { action: 'user.update', entityType: 'user', entityId: u.id, customerId: u.customerId, detail: Object.fromEntries(changed.map((k) => [k, updates[k]])) });
  return toUserDto(u);
}

/** Mails a fresh invitation (set-password link) to the user. */
export async function reinviteUser(deps: UserDeps, actor: Actor, id: number): Promise<UserDto> {
  const u = await loadUser(deps.models, id);
  await sendInvitation(deps, u);
  await auditAs(deps.models, actor, { action: 'user.invite', entityType: 'user', entityId: u.id, customerId: u.customerId });
  return toUserDto(u);
}
