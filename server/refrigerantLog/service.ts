/**
 * The refrigerant log of a system (a box): its full charge and appliance type, and every addition
 * and recovery, append-only, stored in kg. The leak rate at each addition comes from the pure
 * annualizing method in shared/records/leakRate.ts; the GWP and its source from shared/refrigerants.
 */
import { Op } from 'sequelize';
import type { SessionUser } from '../../shared/schemas/auth';
import type { RefrigerantEntryBody, RefrigerantEntryDto, RefrigerantLogDto, RefrigerantSystemBody } from '../../shared/schemas/refrigerantLog';
import { LEAK_RATE_METHOD_SOURCE, LEAK_RATE_THRESHOLDS, REPAIR_DEADLINE_DAYS, REPAIR_DEADLINE_SOURCE, leakRateEvents, leakRuleHint, toKg } from '../../shared/records/leakRate';
import { getRefrigerant, isRefrigerantId } from '../../shared/refrigerants/index';
import type { AppContext } from '../context';
import type { RefrigerantEntry } from '../models/records';
import { problems } from '../http/problem';
import { auditBy } from '../audit/service';
import { loadScopedBox } from '../boxes/service';

export interface RefrigerantLogDeps {
  ctx: AppContext;
  requestId: string | null;
}

const today = () => new Date().toISOString().slice(0, 10);

function toEntryDto(e: RefrigerantEntry, names: Map<number, string>): RefrigerantEntryDto {
  return {
    id: e.id,
    kind: e.kind,
    amountKg: e.amountKg,
    enteredAmount: e.enteredAmount,
    enteredUnit: e.enteredUnit,
    date: e.occurredOn,
    refrigerant: e.refrigerant,
    technicianId: e.technicianId,
    technicianName: names.get(e.technicianId) ?? `user ${e.technicianId}`,
    cylinderId: e.cylinderId,
    reason: e.reason,
    exemption: e.exemption,
    sameLeakAsPrevious: e.sameLeakAsPrevious,
    createdAt: e.createdAt.toISOString(),
  };
}

/** The log of one box the user may see (404 otherwise), with the leak rate at every rated addition (%, per year). */
export async function getRefrigerantLog(ctx: AppContext, user: SessionUser, boxId: number): Promise<RefrigerantLogDto> {
  const { models } = ctx;
  const box = await loadScopedBox(models, user, boxId);
  const [system, entries] = await Promise.all([
    models.RefrigerantSystem.findByPk(box.id),
    models.RefrigerantEntry.findAll({ where: { boxId: box.id }, order: [['occurredOn', 'ASC'], ['id', 'ASC']] }),
  ]);
  const techIds = [...new Set(entries.map((e) => e.technicianId))];
  const users = techIds.length ? await models.User.findAll({ where: { id: { [Op.in]: techIds } }, attributes: ['id', 'name'] }) : [];
  const names = new Map(users.map((u) => [u.id, u.name]));
  const info = isRefrigerantId(box.refrigerant) ? getRefrigerant(box.refrigerant) : null;
  const events = system
    ? leakRateEvents({
        fullChargeKg: system.fullChargeKg,
        applianceType: system.applianceType,
        fullChargeDate: system.fullChargeDate,
        entries: entries.map((e) => ({ id: e.id, kind: e.kind, date: e.occurredOn, amountKg: e.amountKg, exemption: e.exemption, sameLeakAsPrevious: e.sameLeakAsPrevious })),
      })
    : [];
  const sum = (kind: 'addition' | 'recovery') => entries.filter((e) => e.kind === kind).reduce((s, e) => s + e.amountKg, 0);
  return {
    boxId: box.id,
    boxName: box.name,
    siteName: box.site?.name ?? '',
    customerId: box.customerId,
    refrigerant: box.refrigerant,
    gwp: info?.gwp ?? null,
    gwpSource: info?.gwpSource ?? null,
    system: system ? { fullChargeKg: system.fullChargeKg, applianceType: system.applianceType, fullChargeDate: system.fullChargeDate, updatedAt: system.updatedAt.toISOString() } : null,
    threshold: system ? { ...LEAK_RATE_THRESHOLDS[system.applianceType] } : null,
    method: LEAK_RATE_METHOD_SOURCE,
    repairDeadlineDays: REPAIR_DEADLINE_DAYS,
    repairDeadlineSource: REPAIR_DEADLINE_SOURCE,
    entries: entries.map((e) => toEntryDto(e, names)),
    events,
    latest: events.length ? events[events.length - 1]! : null,
    ruleHint: system && info ? leakRuleHint(box.refrigerant, info.gwp, system.fullChargeKg) : null,
    totals: { addedKg: sum('addition'), recoveredKg: sum('recovery') },
  };
}

/** Sets a box's full charge (kg from the entered unit), appliance type and full-charge date. */
export async function setRefrigerantSystem(deps: RefrigerantLogDeps, actor: SessionUser, boxId: number, input: RefrigerantSystemBody): Promise<RefrigerantLogDto> {
  const { ctx } = deps;
  const box = await loadScopedBox(ctx.models, actor, boxId);
  if (input.fullChargeDate !== null && input.fullChargeDate > today()) throw problems.unprocessable('date-in-future', 'Date in the future', 'The full-charge date cannot be after today.', { fullChargeDate: ['Not after today'] });
  const fullChargeKg = toKg(input.fullCharge, input.unit);
  await ctx.sequelize.transaction(async (t) => {
    await ctx.models.RefrigerantSystem.upsert({ boxId: box.id, customerId: box.customerId, fullChargeKg, applianceType: input.applianceType, fullChargeDate: input.fullChargeDate, updatedBy: actor.id, updatedAt: new Date() }, { transaction: t });
    await auditBy(ctx.models, { userId: actor.id, requestId: deps.requestId }, { action: 'refrigerant.system.set', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { fullChargeKg, entered: { amount: input.fullCharge, unit: input.unit }, applianceType: input.applianceType, fullChargeDate: input.fullChargeDate } }, t);
  });
  return getRefrigerantLog(ctx, actor, box.id);
}

/** Appends one addition or recovery (kg from the entered unit) for the box's refrigerant; 422 before the full charge is set. */
export async function addRefrigerantEntry(deps: RefrigerantLogDeps, actor: SessionUser, boxId: number, input: RefrigerantEntryBody): Promise<RefrigerantLogDto> {
  const { ctx } = deps;
  const box = await loadScopedBox(ctx.models, actor, boxId);
  const system = await ctx.models.RefrigerantSystem.findByPk(box.id);
  if (!system) throw problems.unprocessable('no-full-charge', 'Full charge not set', 'Enter the system’s full charge and appliance type before logging refrigerant: the leak rate is a share of the full charge.');
  if (input.date > today()) throw problems.unprocessable('date-in-future', 'Date in the future', 'The date of the work cannot be after today.', { date: ['Not after today'] });
  let technicianId = actor.id;
  if (input.technicianId !== undefined && input.technicianId !== actor.id) {
    const u = await ctx.models.User.findOne({ where: { id: input.technicianId, role: { [Op.in]: ['technician', 'admin'] }, disabled: false } });
    if (!u) throw problems.unprocessable('unknown-technician', 'Unknown technician', 'The technician must be an active technician or admin account.', { technicianId: ['Choose an active technician'] });
    technicianId = u.id;
  }
  const amountKg = toKg(input.amount, input.unit);
  await ctx.sequelize.transaction(async (t) => {
    const e = await ctx.models.RefrigerantEntry.create(
      {
        boxId: box.id,
        customerId: box.customerId,
        kind: input.kind,
        amountKg,
        enteredAmount: input.amount,
        enteredUnit: input.unit,
        occurredOn: input.date,
        refrigerant: box.refrigerant,
        technicianId,
        cylinderId: input.cylinderId,
        reason: input.reason,
        exemption: input.exemption,
        sameLeakAsPrevious: input.sameLeakAsPrevious,
        createdBy: actor.id,
        createdAt: new Date(),
      },
      { transaction: t },
    );
    await auditBy(ctx.models, { userId: actor.id, requestId: deps.requestId }, { action: `refrigerant.${input.kind}`, entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { entryId: e.id, amountKg, refrigerant: box.refrigerant, cylinderId: input.cylinderId } }, t);
  });
  return getRefrigerantLog(ctx, actor, box.id);
}
