/**
 * /api/v1/boxes/:id/alarm-rules: every rule of a box with its default, source, override and
 * effective value (any signed-in user who sees the box); PUT/DELETE /:ruleId set or remove the
 * box's override (technicians and admins; managers read only). Other tenants' boxes are 404.
 */
import { Router, type Request } from 'express';
import { ALARM_RULES, type AlarmRuleId } from '../../shared/alarms/types';
import { ruleOverrideBodyFor } from '../../shared/schemas/alarms';
import type { AppContext } from '../context';
import type { AuditActor } from '../audit/service';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { problems } from '../http/problem';
import { parseBody, parseId } from '../http/validate';
import { loadScopedBox } from '../boxes/service';
import { boxAlarmRules, removeRuleOverride, setRuleOverride } from './ruleOverrides';

function ruleIdOf(req: Request): AlarmRuleId {
  const id = req.params.ruleId;
  if (typeof id !== 'string' || !(ALARM_RULES as readonly string[]).includes(id)) throw problems.notFound('alarm rule');
  return id as AlarmRuleId;
}

const actorOf = (req: Request): AuditActor => ({ userId: req.user?.id ?? null, requestId: typeof req.id === 'string' ? req.id : null });

/** The alarm-rules router, mounted under /boxes. */
export function alarmRuleRoutes(ctx: AppContext): Router {
  const r = Router();
  const { models } = ctx;

  r.get('/:id/alarm-rules', requireAuth, async (req, res) => {
    const box = await loadScopedBox(models, currentUser(req), parseId(req));
    res.json(await boxAlarmRules(models, box));
  });

  r.put('/:id/alarm-rules/:ruleId', requireRole('admin', 'technician'), async (req, res) => {
    const user = currentUser(req);
    const id = parseId(req);
    const ruleId = ruleIdOf(req);
    const body = parseBody(ruleOverrideBodyFor(ruleId), req);
    const box = await loadScopedBox(models, user, id);
    await setRuleOverride(ctx, actorOf(req), box, ruleId, body);
    const dto = await boxAlarmRules(models, box);
    res.json(dto.rules.find((x) => x.ruleId === ruleId));
  });

  r.delete('/:id/alarm-rules/:ruleId', requireRole('admin', 'technician'), async (req, res) => {
    const user = currentUser(req);
    const id = parseId(req);
    const ruleId = ruleIdOf(req);
    const box = await loadScopedBox(models, user, id);
    await removeRuleOverride(ctx, actorOf(req), box, ruleId);
    res.status(204).end();
  });

  return r;
}
