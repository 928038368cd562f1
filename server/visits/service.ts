/**
 * Service visits: a technician's visit on a box or a whole site, with findings, work, parts, time
 * on site, linked alarms and the charging checks computed by the shared engine. Closing a visit
 * can acknowledge its linked alarms through the alarm actions, with the visit as the note.
 * Services take (deps, actor, input) and return DTOs; each write has its audit entry.
 */
import { Op, type WhereOptions } from 'sequelize';
import type { SessionUser } from '../../shared/schemas/auth';
import type { AttachmentDto, ChargingCheckBody, VisitCloseResult, VisitCreateBody, VisitDto, VisitPart, VisitUpdateBody } from '../../shared/schemas/visits';
import { computeChargingChecks, receiverLevelWarning } from '../../shared/records/chargingChecks';
import { needsAck } from '../../shared/alarms/lifecycle';
import type { AppContext } from '../context';
import type { ServiceVisit, VisitAttachment } from '../models/records';
import { HttpProblem, problems } from '../http/problem';
import { scopeWhere } from '../auth/scope';
import { auditBy, type AuditActor } from '../audit/service';
import { actOnAlarm } from '../alarms/actions';

export interface VisitDeps {
  ctx: AppContext;
  requestId: string | null;
}

const actorOf = (deps: VisitDeps, user: SessionUser): AuditActor => ({ userId: user.id, requestId: deps.requestId });
const iso = (d: Date | null) => (d === null ? null : d.toISOString());

/** A visit the user may see, or a 404 problem (another tenant's visit is "not found"). */
export async function loadScopedVisit(ctx: AppContext, user: SessionUser, id: number): Promise<ServiceVisit> {
  const v = await ctx.models.ServiceVisit.findOne({ where: { [Op.and]: [{ id }, scopeWhere(user)] } });
  if (!v) throw problems.notFound('service visit');
  return v;
}

/** The download and thumbnail URLs of an attachment row. */
export function toAttachmentDto(a: VisitAttachment): AttachmentDto {
  return {
    id: a.id,
    visitId: a.visitId,
    contentType: a.contentType,
    sizeBytes: a.sizeBytes,
    fileName: a.fileName,
    hasThumb: a.hasThumb,
    url: `/api/v1/attachments/${a.id}`,
    thumbUrl: a.hasThumb ? `/api/v1/attachments/${a.id}/thumb` : null,
    uploadedAt: a.createdAt.toISOString(),
  };
}

function parseJson<T>(s: string | null, fallback: T): T {
  if (s === null) return fallback;
  try {
    return JSON.parse(s) as T;
  } catch {
    return fallback;
  }
}

/** The DTO of a stored visit: names, linked alarms, checks and attachments. */
export async function toVisitDto(ctx: AppContext, v: ServiceVisit): Promise<VisitDto> {
  const { models } = ctx;
  const [site, box, tech, links, attachments] = await Promise.all([
    models.Site.findByPk(v.siteId, { attributes: ['name'] }),
    v.boxId === null ? null : models.Box.findByPk(v.boxId, { attributes: ['name'] }),
    models.User.findByPk(v.technicianId, { attributes: ['name'] }),
    models.ServiceVisitAlarm.findAll({ where: { visitId: v.id } }),
    models.VisitAttachment.findAll({ where: { visitId: v.id }, order: [['id', 'ASC']] }),
  ]);
  const alarms = links.length === 0 ? [] : await models.Alarm.findAll({ where: { id: links.map((l) => l.alarmId) }, order: [['raisedAt', 'DESC']] });
  const hasChecks = v.checkRefrigerant !== null;
  return {
    id: v.id,
    customerId: v.customerId,
    siteId: v.siteId,
    siteName: site?.name ?? `site ${v.siteId}`,
    boxId: v.boxId,
    boxName: v.boxId === null ? null : (box?.name ?? `box ${v.boxId}`),
    visitedOn: v.visitedOn,
    technicianId: v.technicianId,
    technicianName: tech?.name ?? `user ${v.technicianId}`,
    findings: v.findings,
    workDone: v.workDone,
    parts: parseJson<VisitPart[]>(v.parts, []),
    timeOnSiteMin: v.timeOnSiteMin,
    status: v.status,
    closedAt: iso(v.closedAt),
    alarms: alarms.map((a) => ({ id: a.id, ruleId: a.ruleId, state: a.state, message: a.message, raisedAt: a.raisedAt.toISOString() })),
    checks: hasChecks
      ? {
          refrigerant: v.checkRefrigerant ?? '',
          elevationM: v.checkElevationM ?? 0,
          suctionKPaG: v.suctionKPaG,
          suctionLineC: v.suctionLineC,
          liquidKPaG: v.liquidKPaG,
          liquidLineC: v.liquidLineC,
          sightGlassClear: v.sightGlassClear,
          receiverLevelPercent: v.receiverLevelPercent,
          saturatedSuctionC: v.saturatedSuctionC,
          superheatK: v.superheatK,
          saturatedLiquidC: v.saturatedLiquidC,
          subcoolingK: v.subcoolingK,
          highSideState: v.highSideState,
          receiverLevelWarning: receiverLevelWarning(v.receiverLevelPercent),
          notes: parseJson<string[]>(v.checkNotes, []),
        }
      : null,
    attachments: attachments.map(toAttachmentDto),
    createdAt: v.createdAt.toISOString(),
    updatedAt: v.updatedAt.toISOString(),
  };
}

/** The technician of a visit: a given staff user id (checked) or the actor. */
async function technicianOf(ctx: AppContext, actor: SessionUser, technicianId: number | undefined): Promise<number> {
  if (technicianId === undefined || technicianId === actor.id) return actor.id;
  const u = await ctx.models.User.findOne({ where: { id: technicianId, role: { [Op.in]: ['technician', 'admin'] }, disabled: false } });
  if (!u) throw problems.unprocessable('unknown-technician', 'Unknown technician', 'The technician must be an active technician or admin account.', { technicianId: ['Choose an active technician'] });
  return u.id;
}

/** Checks that every alarm id belongs to the visit's box (or site, for a site visit). */
async function checkAlarms(ctx: AppContext, where: { boxId: number } | { siteId: number }, customerId: number, alarmIds: readonly number[]): Promise<number[]> {
  const ids = [...new Set(alarmIds)];
  if (ids.length === 0) return [];
  const found = await ctx.models.Alarm.findAll({ where: { id: ids, customerId, ...where }, attributes: ['id'] });
  if (found.length !== ids.length) {
    const known = new Set(found.map((a) => a.id));
    const missing = ids.filter((id) => !known.has(id));
    throw problems.unprocessable('alarm-not-on-visit', 'Alarm not on this box or site', `Alarm(s) ${missing.join(', ')} are not alarms of the visited ${'boxId' in where ? 'box' : 'site'}.`, { alarmIds: ['Link only alarms of the visited box or site'] });
  }
  return ids;
}

/** The stored columns of charging checks: inputs, the engine's results and notes; all null without checks. */
function checkColumns(refrigerant: string | null, elevationM: number, checks: ChargingCheckBody | null) {
  if (checks === null || refrigerant === null) {
    return { checkRefrigerant: null, checkElevationM: null, suctionKPaG: null, suctionLineC: null, liquidKPaG: null, liquidLineC: null, saturatedSuctionC: null, superheatK: null, saturatedLiquidC: null, subcoolingK: null, highSideState: null, checkNotes: null, sightGlassClear: null, receiverLevelPercent: null };
  }
  const r = computeChargingChecks(refrigerant, elevationM, checks);
  return {
    checkRefrigerant: refrigerant,
    checkElevationM: elevationM,
    suctionKPaG: checks.suctionKPaG,
    suctionLineC: checks.suctionLineC,
    liquidKPaG: checks.liquidKPaG,
    liquidLineC: checks.liquidLineC,
    saturatedSuctionC: r.saturatedSuctionC,
    superheatK: r.superheatK,
    saturatedLiquidC: r.saturatedLiquidC,
    subcoolingK: r.subcoolingK,
    highSideState: r.highSideState,
    checkNotes: JSON.stringify(r.notes),
    sightGlassClear: checks.sightGlassClear,
    receiverLevelPercent: checks.receiverLevelPercent,
  };
}

/** Where the visit is: the box (with its refrigerant and the site's elevation, m) or the site, scoped. */
async function placeOf(ctx: AppContext, actor: SessionUser, input: { boxId?: number | null; siteId?: number | null }) {
  const { models } = ctx;
  if (input.boxId !== undefined && input.boxId !== null) {
    const box = await models.Box.findOne({ where: { [Op.and]: [{ id: input.boxId }, scopeWhere(actor)] } });
    if (!box) throw problems.notFound('box');
    const site = await models.Site.findByPk(box.siteId);
    return { customerId: box.customerId, siteId: box.siteId, boxId: box.id, refrigerant: box.refrigerant, elevationM: site?.elevationM ?? 0 };
  }
  const site = await models.Site.findOne({ where: { [Op.and]: [{ id: input.siteId ?? 0 }, scopeWhere(actor)] } });
  if (!site) throw problems.notFound('site');
  return { customerId: site.customerId, siteId: site.id, boxId: null, refrigerant: null, elevationM: site.elevationM };
}

function noChecksOnSite(boxId: number | null, checks: ChargingCheckBody | null | undefined): void {
  if (boxId === null && checks) throw problems.unprocessable('checks-need-box', 'Charging checks need a box', 'Superheat and subcooling are computed for one box with its refrigerant; record them on a visit to that box.', { checks: ['Choose a box to record charging checks'] });
}

/** Records a new open visit; 404 for a box or site out of scope, 422 for foreign alarms or a bad technician. */
export async function createVisit(deps: VisitDeps, actor: SessionUser, input: VisitCreateBody): Promise<VisitDto> {
  const { ctx } = deps;
  const place = await placeOf(ctx, actor, input);
  noChecksOnSite(place.boxId, input.checks);
  const technicianId = await technicianOf(ctx, actor, input.technicianId);
  const alarmIds = await checkAlarms(ctx, place.boxId !== null ? { boxId: place.boxId } : { siteId: place.siteId }, place.customerId, input.alarmIds);
  const visit = await ctx.sequelize.transaction(async (t) => {
    const v = await ctx.models.ServiceVisit.create(
      {
        customerId: place.customerId,
        siteId: place.siteId,
        boxId: place.boxId,
        visitedOn: input.visitedOn,
        technicianId,
        findings: input.findings,
        workDone: input.workDone,
        parts: JSON.stringify(input.parts),
        timeOnSiteMin: input.timeOnSiteMin,
        closedAt: null,
        closedBy: null,
        ...checkColumns(place.refrigerant, place.elevationM, input.checks),
        createdBy: actor.id,
      },
      { transaction: t },
    );
    if (alarmIds.length) await ctx.models.ServiceVisitAlarm.bulkCreate(alarmIds.map((alarmId) => ({ visitId: v.id, alarmId })), { transaction: t });
    await auditBy(ctx.models, actorOf(deps, actor), { action: 'visit.create', entityType: 'service-visit', entityId: v.id, customerId: v.customerId, detail: { boxId: v.boxId, siteId: v.siteId, alarmIds } }, t);
    return v;
  });
  return toVisitDto(ctx, visit);
}

/** Changes an open visit; 409 once closed. Checks are recomputed for the box's current refrigerant. */
export async function updateVisit(deps: VisitDeps, actor: SessionUser, id: number, input: VisitUpdateBody): Promise<VisitDto> {
  const { ctx } = deps;
  const v = await loadScopedVisit(ctx, actor, id);
  if (v.status === 'closed') throw problems.conflict('This visit is closed; its record can no longer change.');
  noChecksOnSite(v.boxId, input.checks);
  const values: Partial<ServiceVisit> = {};
  if (input.visitedOn !== undefined) values.visitedOn = input.visitedOn;
  if (input.technicianId !== undefined) values.technicianId = await technicianOf(ctx, actor, input.technicianId);
  if (input.findings !== undefined) values.findings = input.findings;
  if (input.workDone !== undefined) values.workDone = input.workDone;
  if (input.parts !== undefined) values.parts = JSON.stringify(input.parts);
  if (input.timeOnSiteMin !== undefined) values.timeOnSiteMin = input.timeOnSiteMin;
  if (input.checks !== undefined) {
    const place = await placeOf(ctx, actor, { boxId: v.boxId, siteId: v.siteId });
    Object.assign(values, checkColumns(place.refrigerant, place.elevationM, input.checks));
  }
  const alarmIds = input.alarmIds === undefined ? undefined : await checkAlarms(ctx, v.boxId !== null ? { boxId: v.boxId } : { siteId: v.siteId }, v.customerId, input.alarmIds);
  await ctx.sequelize.transaction(async (t) => {
    await v.update(values, { transaction: t });
    if (alarmIds !== undefined) {
      await ctx.models.ServiceVisitAlarm.destroy({ where: { visitId: v.id }, transaction: t });
      if (alarmIds.length) await ctx.models.ServiceVisitAlarm.bulkCreate(alarmIds.map((alarmId) => ({ visitId: v.id, alarmId })), { transaction: t });
    }
    await auditBy(ctx.models, actorOf(deps, actor), { action: 'visit.update', entityType: 'service-visit', entityId: v.id, customerId: v.customerId, detail: { fields: Object.keys(input) } }, t);
  });
  return toVisitDto(ctx, v);
}

/**
 * Closes an open visit (409 when already closed); with `acknowledgeAlarms`, each linked alarm that
 * waits for acknowledgement is acknowledged through the alarm actions with the visit as the note.
 */
export async function closeVisit(deps: VisitDeps, actor: SessionUser, id: number, acknowledgeAlarms: boolean): Promise<VisitCloseResult> {
  const { ctx } = deps;
  const v = await ctx.sequelize.transaction(async (t) => {
    const row = await ctx.models.ServiceVisit.findOne({ where: { [Op.and]: [{ id }, scopeWhere(actor)] }, lock: t.LOCK.UPDATE, transaction: t });
    if (!row) throw problems.notFound('service visit');
    if (row.status === 'closed') throw problems.conflict('This visit is already closed.');
    await row.update({ status: 'closed', closedAt: new Date(), closedBy: actor.id }, { transaction: t });
    await auditBy(ctx.models, actorOf(deps, actor), { action: 'visit.close', entityType: 'service-visit', entityId: row.id, customerId: row.customerId, detail: { acknowledgeAlarms } }, t);
    return row;
  });
  const links = await ctx.models.ServiceVisitAlarm.findAll({ where: { visitId: v.id }, order: [['alarmId', 'ASC']] });
  const summary = (v.workDone || v.findings || 'visit closed').replace(/\s+/g, ' ').trim();
  const note = `Service visit #${v.id} on ${v.visitedOn}: ${summary}`.slice(0, 500);
  const results: VisitCloseResult['alarms'] = [];
  for (const { alarmId } of links) {
    const alarm = await ctx.models.Alarm.findByPk(alarmId, { attributes: ['id', 'state'] });
    if (!acknowledgeAlarms || !alarm || !needsAck(alarm.state)) {
      results.push({ alarmId, outcome: 'not-waiting' });
      continue;
    }
    try {
      await actOnAlarm({ ctx, requestId: deps.requestId }, actor, alarmId, { action: 'ack', note });
      results.push({ alarmId, outcome: 'acknowledged' });
    } catch (err) {
      if (!(err instanceof HttpProblem)) throw err;
      results.push({ alarmId, outcome: 'refused', detail: err.detail ?? err.title });
    }
  }
  return { visit: await toVisitDto(ctx, v), alarms: results };
}

/** One page of the visits the user may see, newest first, optionally for one box, site or status. */
export async function listVisits(ctx: AppContext, user: SessionUser, filter: { boxId?: number; siteId?: number; status?: 'open' | 'closed' }, page: { pageSize: number; offset: number }): Promise<{ items: VisitDto[]; total: number }> {
  const where: WhereOptions<ServiceVisit> = { [Op.and]: [scopeWhere(user), filter.boxId ? { boxId: filter.boxId } : {}, filter.siteId ? { siteId: filter.siteId } : {}, filter.status ? { status: filter.status } : {}] };
  const { rows, count } = await ctx.models.ServiceVisit.findAndCountAll({ where, order: [['visitedOn', 'DESC'], ['id', 'DESC']], limit: page.pageSize, offset: page.offset });
  return { items: await Promise.all(rows.map((v) => toVisitDto(ctx, v))), total: count };
}
