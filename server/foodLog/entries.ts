/**
 * Writes to the food-safety log: corrective actions, notes, corrections and sign-offs. A signed
 * day is append-only: its entries are never updated or deleted (409 problem); a correction is a
 * new entry that refers to the old one. Each write locks the box row, so a sign-off and an edit of
 * the same box cannot interleave, and is audited in the same transaction.
 */
import { Op, type Transaction } from 'sequelize';
import type { FoodLogEntryBody, FoodLogEntryPatch, FoodLogSignOffBody, FoodLogSiteSettingsBody } from '../../shared/schemas/foodLog';
import { daysBetween } from '../../shared/records/zonedTime';
import type { SessionUser } from '../../shared/schemas/auth';
import type { AppContext } from '../context';
import type { Site } from '../models';
import type { FoodLogEntry } from '../models/foodLog';
import { auditBy, type AuditActor } from '../audit/service';
import { scopeWhere } from '../auth/scope';
import { problems } from '../http/problem';
import { siteToday, type FoodLogBox } from './service';

async function lockBox(ctx: AppContext, boxId: number, transaction: Transaction): Promise<void> {
  await ctx.models.Box.findByPk(boxId, { attributes: ['id'], lock: transaction.LOCK.UPDATE, transaction });
}

async function isSigned(ctx: AppContext, boxId: number, day: string, transaction: Transaction): Promise<boolean> {
  return (await ctx.models.FoodLogEntry.count({ where: { boxId, day, kind: 'sign-off' }, transaction })) > 0;
}

function refuseFutureDay(day: string, site: Site): void {
  const today = siteToday(site.timeZone);
  if (day > today) throw problems.unprocessable('future-day', 'Day not reached yet', `${day} has not begun at the site (today there is ${today}).`, { day: ['a day up to today, in the site’s time zone'] });
}

/** Appends an entry to a box's log (a correction takes the day of the entry it corrects); returns it. */
export async function addEntry(ctx: AppContext, user: SessionUser, actor: AuditActor, fb: FoodLogBox, body: FoodLogEntryBody): Promise<FoodLogEntry> {
  return ctx.sequelize.transaction(async (transaction) => {
    await lockBox(ctx, fb.box.id, transaction);
    const now = new Date();
    let day: string;
    let refersToId: number | null = null;
    if (body.kind === 'correction') {
      const old = await ctx.models.FoodLogEntry.findOne({ where: { id: body.refersToId, boxId: fb.box.id }, transaction });
      if (!old) throw problems.unprocessable('unknown-entry', 'No such entry', `Entry ${body.refersToId} is not in this box's log.`, { refersToId: ['an entry of this box'] });
      day = old.day;
      refersToId = old.id;
    } else {
      day = body.day;
      refuseFutureDay(day, fb.site);
    }
    const entry = await ctx.models.FoodLogEntry.create(
      {
        boxId: fb.box.id,
        customerId: fb.box.customerId,
        day,
        kind: body.kind,
        text: body.text,
        byUserId: user.id,
        byName: user.name,
        at: body.kind !== 'correction' && body.at ? new Date(body.at) : now,
        recordedAt: now,
        refersToId,
        productProbeC: body.kind === 'corrective-action' ? (body.productProbeC ?? null) : null,
        excursionStartAt: body.kind === 'corrective-action' && body.excursionStartAt ? new Date(body.excursionStartAt) : null,
      },
      { transaction },
    );
    await auditBy(ctx.models, actor, { action: `food-log.${body.kind}`, entityType: 'food-log-entry', entityId: entry.id, customerId: fb.box.customerId, detail: { boxId: fb.box.id, day, refersToId, text: body.text } }, transaction);
    return entry;
  });
}

/** One entry in the user's scope, or a 404 problem. */
async function loadScopedEntry(ctx: AppContext, user: SessionUser, id: number, transaction?: Transaction): Promise<FoodLogEntry> {
  const e = await ctx.models.FoodLogEntry.findOne({ where: { [Op.and]: [{ id }, scopeWhere(user)] }, transaction });
  if (!e) throw problems.notFound('log entry');
  return e;
}

/** Refuses a change to an entry: sign-offs and every entry of a signed day are append-only (409); only the author or an admin may change one (403). */
async function assertChangeable(ctx: AppContext, user: SessionUser, e: FoodLogEntry, transaction: Transaction): Promise<void> {
  if (e.kind === 'sign-off') throw problems.conflict('A sign-off is never changed or removed; add a correction that refers to it.');
  if (await isSigned(ctx, e.boxId, e.day, transaction)) throw problems.conflict(`The log of ${e.day} is signed off and append-only: add a correction that refers to entry ${e.id} instead.`);
  if (user.role !== 'admin' && e.byUserId !== user.id) throw problems.forbidden('Only the person who wrote this entry (or an admin) may change it.');
}

/** Changes an entry of a day not yet signed (the change is audited with the old values). */
export async function updateEntry(ctx: AppContext, user: SessionUser, actor: AuditActor, id: number, patch: FoodLogEntryPatch): Promise<FoodLogEntry> {
  const first = await loadScopedEntry(ctx, user, id);
  return ctx.sequelize.transaction(async (transaction) => {
    await lockBox(ctx, first.boxId, transaction);
    const e = await loadScopedEntry(ctx, user, id, transaction);
    await assertChangeable(ctx, user, e, transaction);
    const before = { text: e.text, at: e.at.toISOString(), productProbeC: e.productProbeC };
    await e.update(
      {
        ...(patch.text !== undefined ? { text: patch.text } : {}),
        ...(patch.at !== undefined ? { at: new Date(patch.at) } : {}),
        ...(patch.productProbeC !== undefined && e.kind === 'corrective-action' ? { productProbeC: patch.productProbeC } : {}),
      },
      { transaction },
    );
    await auditBy(ctx.models, actor, { action: 'food-log.edit', entityType: 'food-log-entry', entityId: e.id, customerId: e.customerId, detail: { before, after: patch } }, transaction);
    return e;
  });
}

/** Deletes an entry of a day not yet signed (audited with its content). */
export async function deleteEntry(ctx: AppContext, user: SessionUser, actor: AuditActor, id: number): Promise<void> {
  const first = await loadScopedEntry(ctx, user, id);
  await ctx.sequelize.transaction(async (transaction) => {
    await lockBox(ctx, first.boxId, transaction);
    const e = await loadScopedEntry(ctx, user, id, transaction);
    await assertChangeable(ctx, user, e, transaction);
    if ((await ctx.models.FoodLogEntry.count({ where: { refersToId: e.id }, transaction })) > 0) throw problems.conflict('A correction refers to this entry; it stays.');
    await auditBy(ctx.models, actor, { action: 'food-log.delete', entityType: 'food-log-entry', entityId: e.id, customerId: e.customerId, detail: { boxId: e.boxId, day: e.day, kind: e.kind, text: e.text } }, transaction);
    await e.destroy({ transaction });
  });
}

/** Signs off the days from..to of a box (days already signed are left as they are); 409 when every day was signed already. */
export async function signOff(ctx: AppContext, user: SessionUser, actor: AuditActor, fb: FoodLogBox, body: FoodLogSignOffBody): Promise<FoodLogEntry[]> {
  refuseFutureDay(body.to, fb.site);
  const days = daysBetween(body.from, body.to);
  const text = body.text || (days.length === 1 ? `Daily log signed off.` : `Weekly log ${body.from} to ${body.to} signed off.`);
  return ctx.sequelize.transaction(async (transaction) => {
    await lockBox(ctx, fb.box.id, transaction);
    const already = new Set(
      (await ctx.models.FoodLogEntry.findAll({ attributes: ['day'], where: { boxId: fb.box.id, kind: 'sign-off', day: { [Op.between]: [body.from, body.to] } }, transaction })).map((e) => e.day),
    );
    const todo = days.filter((d) => !already.has(d));
    if (todo.length === 0) throw problems.conflict(days.length === 1 ? `${body.from} is already signed off.` : `Every day from ${body.from} to ${body.to} is already signed off.`);
    const now = new Date();
    const created: FoodLogEntry[] = [];
    for (const day of todo) {
      created.push(
        await ctx.models.FoodLogEntry.create(
          { boxId: fb.box.id, customerId: fb.box.customerId, day, kind: 'sign-off', text, byUserId: user.id, byName: user.name, at: now, recordedAt: now, refersToId: null, productProbeC: null, excursionStartAt: null },
          { transaction },
        ),
      );
    }
    await auditBy(ctx.models, actor, { action: 'food-log.sign-off', entityType: 'box', entityId: fb.box.id, customerId: fb.box.customerId, detail: { days: todo, skipped: [...already] } }, transaction);
    return created;
  });
}

/** Sets a site's plan interval, h (audited). */
export async function setSiteInterval(ctx: AppContext, actor: AuditActor, site: Site, body: FoodLogSiteSettingsBody): Promise<void> {
  await ctx.sequelize.transaction(async (transaction) => {
    await ctx.models.FoodLogSiteSetting.upsert({ siteId: site.id, foodLogIntervalH: body.foodLogIntervalH, updatedBy: actor.userId, updatedAt: new Date() }, { transaction });
    await auditBy(ctx.models, actor, { action: 'food-log.plan', entityType: 'site', entityId: site.id, customerId: site.customerId, detail: body }, transaction);
  });
}
