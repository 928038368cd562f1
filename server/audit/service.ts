/** The audit log: who changed what, when. */
import type { Request } from 'express';
import type { Transaction } from 'sequelize';
import type { Models } from '../models';

export interface AuditInput {
  action: string;
  entityType: string;
  entityId?: string | number | null;
  customerId?: number | null;
  detail?: unknown;
}

/** Appends one audit entry for the request's user. */
export async function audit(models: Models, req: Request | null, e: AuditInput): Promise<void> {
  await auditBy(models, { userId: req?.user?.id ?? null, requestId: typeof req?.id === 'string' ? req.id : null }, e);
}

/** Who did it, for services called without a request (and optionally inside a transaction). */
export interface AuditActor {
  userId: number | null;
  requestId: string | null;
}

/** Appends one audit entry for an actor; inside `transaction` when given, so it commits with the change. */
export async function auditBy(models: Models, actor: AuditActor, e: AuditInput, transaction?: Transaction): Promise<void> {
  await models.AuditEntry.create(
    {
      at: new Date(),
      userId: actor.userId,
      action: e.action,
      entityType: e.entityType,
      entityId: e.entityId === undefined || e.entityId === null ? null : String(e.entityId),
      customerId: e.customerId ?? null,
      detail: e.detail === undefined ? null : JSON.stringify(e.detail),
      requestId: actor.requestId,
    },
    { transaction },
  );
}
