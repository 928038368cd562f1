/**
 * /api/v1/alarms (list, detail, ack, shelve, unshelve, ack by a notification link) and
 * /api/v1/boxes/:id/maintenance. Managers see and acknowledge their customer's alarms only
 * (others' are 404); technicians and admins also shelve and set maintenance.
 */
import { Router, type Request } from 'express';
import { Op, type WhereOptions } from 'sequelize';
import { AlarmAckBody, AlarmAckLinkBody, AlarmListQuery, AlarmNoteBody, AlarmShelveBody, MaintenanceBody, type AlarmDetailDto, type MaintenanceDto } from '../../shared/schemas/alarms';
import type { AppContext } from '../context';
import type { Alarm } from '../models/alarms';
import { currentUser, requireAuth, requireRole, scopeWhere } from '../auth/guards';
import { pageResult, parseBody, parseId, parseQuery } from '../http/validate';
import { audit } from '../audit/service';
import { contains } from '../http/search';
import { loadScopedBox } from '../boxes/service';
import { actOnAlarm, alarmIdOfToken, loadScopedAlarm, type AlarmActionDeps } from './actions';
import { toAlarmDto, toAlarmDtos, toNotificationDtos, toTransitionDtos } from './present';
import { oncallRoutes } from './oncallRoutes';
import { alarmRuleRoutes } from './ruleOverrideRoutes';

const deps = (ctx: AppContext, req: Request): AlarmActionDeps => ({ ctx, requestId: typeof req.id === 'string' ? req.id : null });

/** The alarms router. */
export function alarmRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  r.get('/', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const q = parseQuery(AlarmListQuery, req);
    const where: WhereOptions<Alarm>[] = [scopeWhere(user)];
    if (q.state) where.push({ state: q.state });
    if (q.priority) where.push({ priority: q.priority });
    if (q.rule) where.push({ ruleId: q.rule });
    if (q.siteId !== undefined) where.push({ siteId: q.siteId });
    if (q.boxId !== undefined) where.push({ boxId: q.boxId });
    if (q.active !== undefined) where.push({ state: q.active ? { [Op.ne]: 'normal' } : 'normal' });
    if (q.from) where.push({ raisedAt: { [Op.gte]: new Date(q.from) } });
    if (q.to) where.push({ raisedAt: { [Op.lt]: new Date(q.to) } });
    if (q.q) where.push({ message: contains(q.q) });
    const { rows, count } = await models.Alarm.findAndCountAll({
      where: { [Op.and]: where },
      order: [['raisedAt', 'DESC'], ['id', 'DESC']],
      limit: q.pageSize,
      offset: (q.page - 1) * q.pageSize,
    });
    res.json(pageResult(await toAlarmDtos(models, rows), count, q));
  });

  // Before /:id so "ack-link" is never taken for an id.
  r.post('/ack-link', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const body = parseBody(AlarmAckLinkBody, req);
    const alarmId = await alarmIdOfToken(ctx, body.token);
    res.json(await actOnAlarm(deps(ctx, req), user, alarmId, { action: 'ack', note: 'acknowledged from a notification link' }, body.token));
  });

  r.get('/:id', requireAuth, async (req, res) => {
    const a = await loadScopedAlarm(ctx, currentUser(req), parseId(req));
    const transitions = await models.AlarmTransition.findAll({ where: { alarmId: a.id }, order: [['at', 'ASC'], ['id', 'ASC']] });
    const notifications = await models.AlarmNotification.findAll({ where: { alarmId: a.id }, order: [['at', 'ASC'], ['id', 'ASC']] });
    const dto: AlarmDetailDto = { ...(await toAlarmDto(models, a)), transitions: await toTransitionDtos(models, transitions), notifications: toNotificationDtos(notifications) };
    res.json(dto);
  });

  r.post('/:id/ack', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const id = parseId(req);
    const body = parseBody(AlarmAckBody, req);
    res.json(await actOnAlarm(deps(ctx, req), user, id, { action: 'ack', note: body.note }));
  });

  r.post('/:id/shelve', requireRole('admin', 'technician'), async (req, res) => {
    const id = parseId(req);
    const body = parseBody(AlarmShelveBody, req);
    res.json(await actOnAlarm(deps(ctx, req), currentUser(req), id, { action: 'shelve', minutes: body.minutes, reason: body.reason }));
  });

  r.post('/:id/unshelve', requireRole('admin', 'technician'), async (req, res) => {
    const id = parseId(req);
    const body = parseBody(AlarmNoteBody, req);
    res.json(await actOnAlarm(deps(ctx, req), currentUser(req), id, { action: 'unshelve', note: body.note }));
  });

  return r;
}

/** POST/DELETE /boxes/:id/maintenance: no alarm is raised for the box until the window ends. */
export function maintenanceRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  r.post('/:id/maintenance', requireRole('admin', 'technician'), async (req, res) => {
    const user = currentUser(req);
    const id = parseId(req);
    const body = parseBody(MaintenanceBody, req);
    const box = await loadScopedBox(models, user, id);
    const until = new Date(Date.now() + body.minutes * 60_000);
    await models.BoxMaintenance.upsert({ boxId: box.id, untilAt: until, note: body.note ?? null, setBy: user.id, setAt: new Date() });
    ctx.bus.emit('boxMaintenance', { boxId: box.id, untilMs: until.getTime(), byUserId: user.id, note: body.note ?? null });
    await audit(models, req, { action: 'box.maintenance.start', entityType: 'box', entityId: box.id, customerId: box.customerId, detail: { minutes: body.minutes, note: body.note ?? null, until: until.toISOString() } });
    const dto: MaintenanceDto = { boxId: box.id, until: until.toISOString(), note: body.note ?? null };
    res.status(201).json(dto);
  });

  r.delete('/:id/maintenance', requireRole('admin', 'technician'), async (req, res) => {
    const user = currentUser(req);
    const box = await loadScopedBox(models, user, parseId(req));
    const removed = await models.BoxMaintenance.destroy({ where: { boxId: box.id } });
    ctx.bus.emit('boxMaintenance', { boxId: box.id, untilMs: null, byUserId: user.id, note: 'maintenance ended' });
    if (removed > 0) await audit(models, req, { action: 'box.maintenance.end', entityType: 'box', entityId: box.id, customerId: box.customerId });
    res.status(204).end();
  });

  return r;
}

/** Mounts the alarm, maintenance and on-call routers on the API router. */
export function registerAlarmRoutes(api: Router, ctx: AppContext): void {
  api.use('/alarms', alarmRoutes(ctx));
  api.use('/boxes', maintenanceRoutes(ctx));
  api.use('/boxes', alarmRuleRoutes(ctx));
  api.use('/oncall', oncallRoutes(ctx));
}
