/** /api/v1/users (admin only): list, create with an invitation e-mail, edit role/scope, re-invite. */
import { Router } from 'express';
import { Op, type WhereOptions } from 'sequelize';
import { UserCreateBody, UserUpdateBody, type UserDto } from '../../shared/schemas/users';
import type { AppContext } from '../context';
import type { User } from '../models';
import { problems } from '../http/problem';
import { pageOf, pageResult, parseBody, parseId } from '../http/validate';
import { requireRole } from '../auth/guards';
import { audit } from '../audit/service';
import { sendInvitation } from './invite';

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

/** The users router. */
export function userRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;
  r.use(requireRole('admin'));

  async function assertCustomer(customerId: number | null | undefined) {
    if (customerId != null && !(await models.Customer.findByPk(customerId))) {
      throw problems.unprocessable('unknown-customer', 'Unknown customer', `Customer ${customerId} does not exist.`, { customerId: ['Unknown customer'] });
    }
  }

  r.get('/', async (req, res) => {
    const p = pageOf(req);
    const where: WhereOptions<User> = p.q ? { [Op.or]: [{ email: { [Op.like]: `%${p.q}%` } }, { name: { [Op.like]: `%${p.q}%` } }] } : {};
    const { rows, count } = await models.User.findAndCountAll({ where, order: [['name', 'ASC']], limit: p.pageSize, offset: p.offset });
    res.json(pageResult(rows.map(toUserDto), count, p));
  });

  r.get('/:id', async (req, res) => {
    const u = await models.User.findByPk(parseId(req));
    if (!u) throw problems.notFound('user');
    res.json(toUserDto(u));
  });

  r.post('/', async (req, res) => {
    const body = parseBody(UserCreateBody, req);
    await assertCustomer(body.customerId);
    if (await models.User.findOne({ where: { email: body.email } })) throw problems.conflict(`A user with e-mail ${body.email} already exists.`);
    const u = await models.User.create({
      ...body,
      customerId: body.role === 'manager' ? body.customerId : null,
      passwordHash: null,
      inviteTokenHash: null,
      inviteExpiresAt: null,
      invitedAt: null,
      lastLoginAt: null,
      lockedUntil: null,
    });
    await sendInvitation(ctx, u);
    await audit(models, req, { action: 'user.create', entityType: 'user', entityId: u.id, customerId: u.customerId, detail: { role: u.role } });
    res.status(201).json(toUserDto(u));
  });

  r.patch('/:id', async (req, res) => {
    const u = await models.User.findByPk(parseId(req));
    if (!u) throw problems.notFound('user');
    const body = parseBody(UserUpdateBody, req);
    const role = body.role ?? u.role;
    const customerId = body.customerId !== undefined ? body.customerId : u.customerId;
    if (role === 'manager' && customerId === null) throw problems.unprocessable('manager-needs-customer', 'Customer required', 'A store manager must belong to one customer.', { customerId: ['Required for managers'] });
    await assertCustomer(customerId);
    if (body.email && body.email !== u.email && (await models.User.findOne({ where: { email: body.email } }))) throw problems.conflict(`A user with e-mail ${body.email} already exists.`);
    if (u.id === req.user?.id && (body.disabled === true || (body.role && body.role !== 'admin'))) throw problems.conflict('You cannot disable yourself or remove your own admin role.');
    await u.update({ ...body, customerId: role === 'manager' ? customerId : null });
    if (body.disabled) ctx.bus.emit('userSessionEnded', { userId: u.id });
    await audit(models, req, { action: 'user.update', entityType: 'user', entityId: u.id, customerId: u.customerId, detail: body });
    res.json(toUserDto(u));
  });

  r.post('/:id/invite', async (req, res) => {
    const u = await models.User.findByPk(parseId(req));
    if (!u) throw problems.notFound('user');
    await sendInvitation(ctx, u);
    await audit(models, req, { action: 'user.invite', entityType: 'user', entityId: u.id, customerId: u.customerId });
    res.json(toUserDto(u));
  });

  return r;
}
