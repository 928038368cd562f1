/** Demo mode: the demo technician "has a phone" — a virtual device on the fake push service. */
import type { AppContext } from '../context';
import { DEMO_USERS } from '../seed/demoData';

/** Label of the demo technician's virtual phone. */
export const DEMO_PHONE_LABEL = 'Demo phone (virtual)';

/**
 * Subscribes a fresh virtual device for the demo technician at server start (fake push service on,
 * demo seeded), so demo alarms arrive in the push inbox. Returns the subscription id or null.
 */
export async function registerDemoPushDevice(ctx: AppContext): Promise<number | null> {
  const push = ctx.push;
  const email = DEMO_USERS.find((u) => u.role === 'technician')?.email;
  if (!push?.fake || !email) return null;
  try {
    const tech = await ctx.models.User.findOne({ where: { email, disabled: false }, attributes: ['id'] });
    if (!tech) return null;
    const { subscription } = await push.addVirtualDevice(tech.id, DEMO_PHONE_LABEL);
    ctx.logger.info({ userId: tech.id }, 'demo technician has a virtual phone on the fake push service');
    return subscription.id;
  } catch (err) {
    // A demo nicety: the server starts without it.
    ctx.logger.warn({ err }, 'demo virtual phone not registered');
    return null;
  }
}
