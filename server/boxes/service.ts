/** Boxes: tenant-scoped loading and the use cases (actor and input in, plain objects out), with who may change which field. */
import { ForeignKeyConstraintError, Op, type WhereOptions } from 'sequelize';
import { z } from 'zod';
import { DefrostSettings, type BoxCreateBody, type BoxDto, type BoxUpdateBody } from '../../shared/schemas/boxes';
import type { Page } from '../../shared/schemas/common';
import type { RefrigerantId } from '../../shared/refrigerants';
import { ConfigSetPayload } from '../../shared/schemas/telemetry';
import type { SessionUser } from '../../shared/schemas/auth';
import type { AppContext } from '../context';
import type { Box, Controller, Models, Site } from '../models';
import { scopeWhere } from '../auth/guards';
import { HttpProblem, problems } from '../http/problem';
import { changedKeys } from '../http/patch';
import { defineList, runList, scopeByCustomer, type ListInputOf } from '../http/list';
import { toControllerSummary } from '../controllers/service';
import type { Actor } from '../http/actor';
import { auditBy } from '../audit/service';

/** A box loaded with its site, customer and controller. */
export type BoxWithRelations = Box & { site?: Site; customer?: { name: string }; controller?: Controller | null };

export const BOX_INCLUDE = [
  { association: 'site', attributes: ['id', 'name'] },
  { association: 'customer', attributes: ['id', 'name'] },
  { association: 'controller' },
];

type BoxField = keyof BoxUpdateBody;

/** Presents a box with its site and customer names, its controller and its maintenance end (°C, K, minutes, hours). */
export function toBoxDto(b: BoxWithRelations, maintenanceUntil: Date | null): BoxDto {
  return {
    id: b.id,
    siteId: b.siteId,
    siteName: b.site?.name ?? '',
    customerId: b.customerId,
    customerName: b.customer?.name ?? '',
    name: b.name,
    kind: b.kind,
    setpointC: b.setpointC,
    differentialK: b.differentialK,
    highLimitC: b.highLimitC,
    lowLimitC: b.lowLimitC,
    alarmDelayMin: b.alarmDelayMin,
    doorAlarmDelayMin: b.doorAlarmDelayMin,
    // The column is only ever written through the REFRIGERANT_IDS enum of the box schemas.
    refrigerant: b.refrigerant as RefrigerantId,
    valveType: b.valveType,
    saturationMethod: b.saturationMethod,
    superheatTargetK: b.superheatTargetK,
    defrostType: b.defrostType,
    defrostIntervalH: b.defrostIntervalH,
    defrostMaxMin: b.defrostMaxMin,
    defrostTerminationC: b.defrostTerminationC,
    dripMin: b.dripMin,
    fanDelayMin: b.fanDelayMin,
    controller: b.controller ? toControllerSummary(b.controller) : null,
    maintenanceUntil: maintenanceUntil ? maintenanceUntil.toISOString() : null,
    createdAt: b.createdAt.toISOString(),
    updatedAt: b.updatedAt.toISOString(),
  };
}

const BoxFilters = {
  siteId: z.coerce.number().int().positive().optional(),
  customerId: z.coerce.number().int().positive().optional(),
  /** `false`: only boxes without a controller (the provisioning picker); `true`: only boxes with one. */
  hasController: z.enum(['true', 'false']).optional(),
};

/** GET /boxes: `?siteId=`, `?customerId=`, `?hasController=`, searched by box and site name, sorted by a whitelisted column. */
export const BOX_LIST = defineList<Box, 'name' | 'siteName' | 'customerName' | 'kind' | 'setpointC' | 'refrigerant' | 'updatedAt', typeof BoxFilters>({
  sorts: {
    name: ['name'],
    siteName: ['site', 'name'],
    customerName: ['customer', 'name'],
    kind: ['kind'],
    setpointC: ['setpointC'],
    refrigerant: ['refrigerant'],
    updatedAt: ['updatedAt'],
  },
  defaultSort: 'name',
  search: (like) => ({ [Op.or]: [{ name: like }, { '$site.name$': like }] }),
  filters: BoxFilters,
  filterWhere: (f) => {
    const out: WhereOptions<Box>[] = [];
    if (f.siteId !== undefined) out.push({ siteId: f.siteId });
    if (f.customerId !== undefined) out.push({ customerId: f.customerId });
    if (f.hasController !== undefined) out.push({ '$controller.id$': f.hasController === 'true' ? { [Op.ne]: null } : null });
    return out;
  },
  scope: scopeByCustomer<Box>(),
  include: BOX_INCLUDE,
});

/** One page of the boxes the actor may see, with their controllers and maintenance ends. */
export async function listBoxes(models: Models, actor: SessionUser, input: ListInputOf<typeof BOX_LIST>): Promise<Page<BoxDto>> {
  return runList(models.Box, BOX_LIST, actor, input, async (rows) => {
    const until = await maintenanceUntilByBox(models, rows.map((b) => b.id));
    return rows.map((b: BoxWithRelations) => toBoxDto(b, until.get(b.id) ?? null));
  });
}

/**
 * Settings the controller holds: these reach it through PUT /boxes/:id/settings (which records the
 * change and waits for the controller's acknowledgement), so a PATCH must not change them behind
 * the controller's back. Derived from the config/set payload so the two lists cannot drift.
 */
export const CONTROLLER_FIELDS: ReadonlySet<BoxField> = new Set<BoxField>([
  ...(Object.keys(ConfigSetPayload.shape).filter((k) => k !== 'id' && k !== 'defrost') as BoxField[]),
  ...(Object.keys(DefrostSettings.shape) as BoxField[]),
]);

/** What a technician may PATCH: descriptive fields and alarm limits (not the site, not controller settings). */
export const TECHNICIAN_FIELDS: ReadonlySet<BoxField> = new Set<BoxField>([
  'name',
  'kind',
  'valveType',
  'saturationMethod',
  'highLimitC',
  'lowLimitC',
  'alarmDelayMin',
  'doorAlarmDelayMin',
]);

/** One box the user may see, with its relations, or a 404 problem (another tenant's box is "not found"). */
export async function loadScopedBox(models: Models, user: SessionUser, id: number): Promise<BoxWithRelations> {
  const b = await models.Box.findOne({ where: { [Op.and]: [{ id }, scopeWhere(user)] }, include: BOX_INCLUDE });
  if (!b) throw problems.notFound('box');
  return b;
}

/** The end (UTC Date) of each given box's maintenance window still running now; boxes not in maintenance are absent. */
export async function maintenanceUntilByBox(models: Models, boxIds: number[]): Promise<Map<number, Date>> {
  if (boxIds.length === 0) return new Map();
  const rows = await models.BoxMaintenance.findAll({ where: { boxId: { [Op.in]: boxIds }, untilAt: { [Op.gt]: new Date() } }, attributes: ['boxId', 'untilAt'] });
  return new Map(rows.map((m) => [m.boxId, m.untilAt]));
}

async function siteForBox(models: Models, siteId: number): Promise<Site> {
  const site = await models.Site.findByPk(siteId);
  if (!site) throw problems.unprocessable('unknown-site', 'Unknown site', `Site ${siteId} does not exist.`, { siteId: ['Unknown site'] });
  return site;
}

/** A box the actor may see, presented with its relations and maintenance end; 404 outside the tenant. */
export async function getBox(models: Models, actor: Actor, id: number): Promise<BoxDto> {
  return presentBox(models, await loadScopedBox(models, actor.user, id));
}

async function presentBox(models: Models, b: BoxWithRelations): Promise<BoxDto> {
  return toBoxDto(b, (await maintenanceUntilByBox(models, [b.id])).get(b.id) ?? null);
}

async function reloadBox(models: Models, id: number): Promise<BoxDto> {
  const b = await models.Box.findByPk(id, { include: BOX_INCLUDE });
  if (!b) throw problems.notFound('box');
  return presentBox(models, b);
}

/** Creates a box on an existing site (422 otherwise), its customer the site's, and audits it. */
export async function createBox(ctx: AppContext, actor: Actor, body: BoxCreateBody): Promise<BoxDto> {
  const { models } = ctx;
  const site = await siteForBox(models, body.siteId);
  const b: Box = await models.Box.create({ ...body, customerId: site.customerId });
  await auditBy(models, actor, { action: 'box.create', entityType: 'box', entityId: b.id, customerId: b.customerId, detail: body });
  return reloadBox(models, b.id);
}

function fieldErrors(keys: BoxField[], message: string): Record<string, string[]> {
  return Object.fromEntries(keys.map((k) => [k, [message]]));
}

/** Throws unless the role may make these changes to this box. */
function authorizeChanges(user: SessionUser, box: BoxWithRelations, changed: BoxField[]): void {
  if (user.role === 'technician') {
    const refused = changed.filter((k) => !TECHNICIAN_FIELDS.has(k));
    if (refused.length > 0) {
      const detail = `A technician may change descriptive fields and alarm limits only; send controller settings with PUT /boxes/${box.id}/settings. Refused: ${refused.join(', ')}.`;
      throw new HttpProblem(403, 'forbidden', 'Not allowed', detail, fieldErrors(refused, 'Not editable by a technician'));
    }
    return;
  }
  const viaController = changed.filter((k) => CONTROLLER_FIELDS.has(k));
  if (box.controller && viaController.length > 0) {
    const detail = `Box "${box.name}" has controller ${box.controller.serial}: change ${viaController.join(', ')} with PUT /boxes/${box.id}/settings so the controller applies it.`;
    throw new HttpProblem(409, 'controller-settings', 'Setting held by the controller', detail, fieldErrors(viaController, 'Change this through the controller settings'));
  }
}

/** Throws a 422 problem unless low limit < setpoint < high limit holds (°C). */
function assertLimitsOrdered(v: { lowLimitC: number; setpointC: number; highLimitC: number }): void {
  if (v.lowLimitC < v.setpointC && v.setpointC < v.highLimitC) return;
  const msg = `Low limit < setpoint < high limit is required (now ${v.lowLimitC} °C, ${v.setpointC} °C, ${v.highLimitC} °C)`;
  throw problems.unprocessable('limits-order', 'Alarm limits out of order', msg, { lowLimitC: [msg], highLimitC: [msg] });
}

/**
 * Applies a PATCH to a box the actor may see (404 otherwise): only fields whose value differs count as
 * changes; the role decides which may change; the merged limits must stay ordered; a move to another
 * site takes that site's customer. A real change is announced and audited with the old and new values.
 */
export async function updateBox(ctx: AppContext, actor: Actor, input: { id: number; changes: BoxUpdateBody }): Promise<BoxDto> {
  const { models } = ctx;
  const { changes } = input;
  const box = await loadScopedBox(models, actor.user, input.id);
  const changed = changedKeys<BoxUpdateBody>(changes, box);
  authorizeChanges(actor.user, box, changed);
  if (changed.length === 0) return presentBox(models, box);
  const was: Partial<Record<BoxField, unknown>> = Object.fromEntries(changed.map((k) => [k, box[k]]));
  const now: Partial<Record<BoxField, unknown>> = Object.fromEntries(changed.map((k) => [k, changes[k]]));
  assertLimitsOrdered({
    lowLimitC: changes.lowLimitC ?? box.lowLimitC,
    setpointC: changes.setpointC ?? box.setpointC,
    highLimitC: changes.highLimitC ?? box.highLimitC,
  });
  const values: Partial<BoxUpdateBody> & { customerId?: number } = Object.fromEntries(changed.map((k) => [k, changes[k]]));
  if (changes.siteId !== undefined && changed.includes('siteId')) {
    values.customerId = (await siteForBox(models, changes.siteId)).customerId;
  }
  await box.update(values);
  ctx.bus.emit('boxChanged', { boxId: box.id });
  await auditBy(models, actor, { action: 'box.update', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { changed: now, was } });
  return reloadBox(models, box.id);
}

/** Deletes a box the actor may see (its controller goes with it, and is revoked at the broker), and audits it. */
export async function deleteBox(ctx: AppContext, actor: Actor, id: number): Promise<void> {
  const box = await loadScopedBox(ctx.models, actor.user, id);
  const serial = box.controller?.serial ?? null;
  try {
    await box.destroy();
  } catch (err) {
    if (err instanceof ForeignKeyConstraintError) throw problems.conflict(`Box "${box.name}" still has records that refer to it and cannot be deleted.`);
    throw err;
  }
  if (serial) ctx.bus.emit('controllerRevoked', { serial, reason: 'disabled' });
  ctx.bus.emit('boxChanged', { boxId: box.id });
  await auditBy(ctx.models, actor, { action: 'box.delete', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { name: box.name, siteId: box.siteId, controllerSerial: serial } });
}
