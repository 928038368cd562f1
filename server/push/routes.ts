/**
 * /api/v1/push: the VAPID public key and the signed-in user's own push subscriptions; and, with
 * the fake push service on (PUSH_FAKE=1), /api/v1/dev/push-inbox and /api/v1/dev/push-devices for admins.
 */
import { Router } from 'express';
import { PushDeviceBody, PushSubscriptionBody, type PushKeyDto, type PushSubscriptionDto } from '../../shared/schemas/push';
import type { AppContext } from '../context';
import { currentUser, requireAuth, requireRole } from '../auth/guards';
import { parseBody, parseId } from '../http/validate';
import { problems } from '../http/problem';
import { audit } from '../audit/service';
import type { PushService } from './service';
import { deleteSubscription, saveSubscription, subscriptionsOf, toSubscriptionDto } from './store';

function pushOf(ctx: AppContext): PushService {
  if (!ctx.push) throw problems.unavailable('Web Push is not running on this server.');
  return ctx.push;
}

/** The /push router. */
export function pushRoutes(ctx: AppContext): Router {
  const r = Router();

  r.get('/key', requireAuth, (_req, res) => {
    const dto: PushKeyDto = { publicKey: pushOf(ctx).keys.publicKey };
    res.json(dto);
  });

  r.get('/subscriptions', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const dtos: PushSubscriptionDto[] = (await subscriptionsOf(ctx.sequelize, [user.id])).map(toSubscriptionDto);
    res.json(dtos);
  });

  r.post('/subscriptions', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const body = parseBody(PushSubscriptionBody, req);
    const push = pushOf(ctx);
    if (!push.endpointAllowed(body.endpoint)) {
      throw problems.unprocessable('push-endpoint-refused', 'Push endpoint refused', 'The endpoint must be an https:// URL of a push service (plain http only for the local fake push service).', { endpoint: ['must be an https:// URL'] });
    }
    const saved = await saveSubscription(ctx.sequelize, user.id, { endpoint: body.endpoint, p256dh: body.keys.p256dh, auth: body.keys.auth, label: body.label });
    await audit(ctx.models, req, { action: 'push.subscribe', entityType: 'push_subscription', entityId: saved.id, detail: { label: saved.label } });
    res.status(201).json(toSubscriptionDto(saved));
  });

  r.delete('/subscriptions/:id', requireAuth, async (req, res) => {
    const user = currentUser(req);
    const id = parseId(req);
    // Only one's own: another user's subscription is "not found", like any out-of-scope row.
    if (!(await deleteSubscription(ctx.sequelize, id, user.id))) throw problems.notFound('push subscription');
    await audit(ctx.models, req, { action: 'push.unsubscribe', entityType: 'push_subscription', entityId: id });
    res.status(204).end();
  });

  return r;
}

/** The dev routes of the fake push service (admins; mounted only when it runs). */
export function pushDevRoutes(ctx: AppContext): Router {
  const r = Router();

  r.get('/push-inbox', requireRole('admin'), (_req, res) => {
    res.json(ctx.push?.fake?.messages ?? []);
  });

  r.post('/push-devices', requireRole('admin'), async (req, res) => {
    const body = parseBody(PushDeviceBody, req);
    const push = pushOf(ctx);
    const user = await ctx.models.User.findByPk(body.userId, { attributes: ['id', 'disabled'] });
    if (!user || user.disabled) throw problems.unprocessable('unknown-user', 'Unknown user', `No enabled user with id ${body.userId}.`);
    const { subscription } = await push.addVirtualDevice(user.id, body.label);
    await audit(ctx.models, req, { action: 'push.virtual-device', entityType: 'push_subscription', entityId: subscription.id, detail: { userId: user.id, label: body.label } });
    res.status(201).json(toSubscriptionDto(subscription));
  });

  return r;
}

/** Mounts /push, and /dev/push-* when the fake push service runs. */
export function registerPushRoutes(api: Router, ctx: AppContext): void {
  api.use('/push', pushRoutes(ctx));
  if (ctx.config.PUSH_FAKE && ctx.push?.fake) api.use('/dev', pushDevRoutes(ctx));
}
