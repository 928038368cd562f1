/** The audit log: who changed what, when. */
import type { Request } from 'express';
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
  await models.AuditEntry.create({
    at: new Date(),
    userId: req?.user?.id ?? null,
    action: e.action,
    entityType: e.entityType,
    entityId: e.entityId === undefined || e.entityId === null ? null : String(e.entityId),
    customerId: e.customerId ?? null,
    detail: e.detail === undefined ? null : JSON.stringify(e.detail),
    requestId: typeof req?.id === 'string' ? req.id : null,
  });
}
