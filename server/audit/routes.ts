/** /api/v1/audit (admin only): the audit log, newest first, filterable by entity. */
import { Router } from 'express';
import { Op, type WhereOptions } from 'sequelize';
import { z } from 'zod';
import type { AppContext } from '../context';
import type { AuditEntry } from '../models';
import { requireRole } from '../auth/guards';
import { pageOf, pageResult, parseQuery } from '../http/validate';
import { contains } from '../http/search';

/** One audit log entry as GET /audit presents it. */
export interface AuditEntryDto {
  id: number;
  at: string;
  userId: number | null;
  userName: string | null;
  action: string;
  entityType: string;
  entityId: string | null;
  customerId: number | null;
  /** The entry's detail object as written (JSON), or null. */
  detail: unknown;
  requestId: string | null;
}

function parseDetail(raw: string | null): unknown {
  if (raw === null) return null;
  try {
    return JSON.parse(raw);
  } catch {
    return raw;
  }
}

/** Presents an audit entry with the acting user's name. */
export function toAuditEntryDto(e: AuditEntry, userName: string | null): AuditEntryDto {
  return {
    id: Number(e.id),
    at: e.at.toISOString(),
    userId: e.userId,
    userName,
    action: e.action,
    entityType: e.entityType,
    entityId: e.entityId,
    customerId: e.customerId,
    detail: parseDetail(e.detail),
    requestId: e.requestId,
  };
}

const AuditFilter = z.object({
  entityType: z.string().trim().min(1).max(32).optional(),
  entityId: z.string().trim().min(1).max(64).optional(),
});

/** The audit router. */
export function auditRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  r.get('/', requireRole('admin'), async (req, res) => {
    const p = pageOf(req);
    const filter = parseQuery(AuditFilter, req);
    const where: WhereOptions<AuditEntry>[] = [];
    if (filter.entityType) where.push({ entityType: filter.entityType });
    if (filter.entityId) where.push({ entityId: filter.entityId });
    if (p.q) where.push({ action: contains(p.q) });
    const { rows, count } = await models.AuditEntry.findAndCountAll({
      where: { [Op.and]: where },
      order: [['at', 'DESC'], ['id', 'DESC']],
      limit: p.pageSize,
      offset: p.offset,
    });
    const userIds = [...new Set(rows.map((e) => e.userId).filter((id): id is number => id !== null))];
    const users = userIds.length ? await models.User.findAll({ attributes: ['id', 'name'], where: { id: userIds } }) : [];
    const names = new Map(users.map((u) => [u.id, u.name]));
    res.json(pageResult(rows.map((e) => toAuditEntryDto(e, e.userId === null ? null : (names.get(e.userId) ?? null))), count, p));
  });

  return r;
}
