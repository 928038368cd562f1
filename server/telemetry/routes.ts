/** Telemetry routes: fleet status, latest reading, chart readings, settings to the controller, demo faults. */
import { Router, type Request } from 'express';
import { DemoFaultBody } from '../../shared/schemas/demo';
import { ReadingsQuery } from '../../shared/schemas/live';
import { BoxSettingsBody } from '../../shared/schemas/settings';
import type { AppContext } from '../context';
import { currentUser, requireAuth, requireRole, scopeWhere } from '../auth/guards';
import { problems } from '../http/problem';
import { parseBody, parseId, parseQuery } from '../http/validate';
import { fleetStatusJson, latestReading, readingsBetween } from './queries';
import { toChangeDto, type SettingsService } from './settings';
import { SIM_FAULT_TOPIC } from '../mqtt/broker';
import { audit } from '../audit/service';
import { cyclesRoutes } from './cycles';


/** The telemetry router (mounted on /api/v1). */
export function telemetryRoutes(ctx: AppContext, settings: SettingsService): Router {
  const r = Router();
  const { models, sequelize } = ctx;

  async function scopedBox(req: Request) {
    const user = currentUser(req);
    const box = await models.Box.findOne({ where: { id: parseId(req), ...scopeWhere(user) } });
    if (!box) throw problems.notFound('box');
    return box;
  }

  r.get('/fleet/status', requireAuth, async (req, res) => {
    res.type('application/json').send(await fleetStatusJson(sequelize, currentUser(req)));
  });

  r.get('/boxes/:id/latest', requireAuth, async (req, res) => {
    const box = await scopedBox(req);
    const latest = await latestReading(sequelize, box.id);
    if (!latest) throw problems.notFound('reading for this box yet');
    res.json(latest);
  });

  r.get('/boxes/:id/readings', requireAuth, async (req, res) => {
    const box = await scopedBox(req);
    const q = parseQuery(ReadingsQuery, req);
    res.json(await readingsBetween(sequelize, box.id, new Date(q.from), new Date(q.to), q.resolution));
  });

  r.use(cyclesRoutes(ctx)); // GET /boxes/:id/cycles (server/telemetry/cycles.ts)

  r.put('/boxes/:id/settings', requireRole('admin', 'technician'), async (req, res) => {
    const box = await scopedBox(req);
    const body = parseBody(BoxSettingsBody, req);
    res.status(202).json(await settings.request(req, box, body));
  });

  r.get('/boxes/:id/settings/changes', requireAuth, async (req, res) => {
    const box = await scopedBox(req);
    const rows = await models.SettingsChange.findAll({ where: { boxId: box.id }, order: [['requestedAt', 'DESC']], limit: 50 });
    res.json(rows.map(toChangeDto));
  });

  r.post('/demo/faults', requireRole('admin'), async (req, res) => {
    if (!ctx.config.DEMO_MODE) throw problems.forbidden('Fault injection is only available in demo mode.');
    const body = parseBody(DemoFaultBody, req);
    const ctl = await models.Controller.findOne({ where: { boxId: body.boxId } });
    if (!ctl) throw problems.notFound('controller for this box');
    if (!ctx.publish) throw problems.unavailable('The broker is not connected.');
    await ctx.publish(SIM_FAULT_TOPIC, JSON.stringify({ serial: ctl.serial, fault: body.fault, on: body.on, ...(body.sensor ? { sensor: body.sensor } : {}) }), { qos: 1 });
    await audit(models, req, { action: body.on ? 'demo.fault.on' : 'demo.fault.off', entityType: 'box', entityId: body.boxId, detail: { fault: body.fault, sensor: body.sensor ?? null } });
    res.status(202).json({ serial: ctl.serial, fault: body.fault, on: body.on });
  });

  return r;
}
