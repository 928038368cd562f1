/**
 * Alarm notices by e-mail and by Web Push (one push per subscription of each recipient), each with
 * its own single-use, expiring acknowledgement link (a random token stored only as its digest,
 * like the invitation token). Every attempt is logged per alarm; a push failure never stops e-mail.
 */
import type { AppContext } from '../context';
import type { User } from '../models';
import type { Alarm } from '../models/alarms';
import { randomToken, tokenDigest } from '../auth/passwords';
import type { AlarmPushPayload } from '../../shared/schemas/push';
import { subscriptionsOf, type StoredSubscription } from '../push/store';

/** How long an acknowledgement link stays valid (h). */
export const ACK_LINK_VALID_H = 24;

export interface AlarmMailFacts {
  boxName: string;
  siteName: string;
}

/** Stores a fresh single-use acknowledgement token for a recipient and returns its link. */
export async function issueAckLink(ctx: AppContext, alarm: Alarm, userId: number | null, nowMs = Date.now()): Promise<string> {
  const token = randomToken();
  await ctx.models.AlarmAckToken.create({ tokenHash: tokenDigest(token), alarmId: alarm.id, userId, expiresAt: new Date(nowMs + ACK_LINK_VALID_H * 3_600_000), usedAt: null, usedBy: null });
  return `${ctx.config.publicUrl}/alarms/${alarm.id}?ack=${token}`;
}

function mailText(user: User, alarm: Alarm, facts: AlarmMailFacts, link: string, level: number): string {
  return [
    `Hello ${user.name},`,
    '',
    `${alarm.priority.toUpperCase()} alarm on ${facts.boxName} at ${facts.siteName}: ${alarm.message}`,
    `Rule: ${alarm.ruleId}. Raised at ${alarm.raisedAt.toISOString()} (UTC).${level > 0 ? ` Not acknowledged yet: escalation level ${level}.` : ''}`,
    '',
    `Acknowledge it (sign-in required; the link works once, for ${ACK_LINK_VALID_H} hours):`,
    link,
    '',
    'Rimehold readings are not a diagnosis; check the box on site.',
  ].join('\n');
}

/** Where a push went, for the log: the device label and the push service's host (≤ 190 chars). */
function pushRecipient(sub: StoredSubscription): string {
  let host = '?';
  try {
    host = new URL(sub.endpoint).host;
  } catch {
    // keep '?': the endpoint was validated on subscription, so this is not expected
  }
  return `${sub.label} (${host})`.slice(0, 190);
}

/** The push payload of an alarm (the service worker shows title and body, and opens ackUrl on "Acknowledge"). */
export function alarmPushPayload(alarm: Alarm, facts: AlarmMailFacts, ackUrl: string, level: number): AlarmPushPayload {
  return {
    alarmId: alarm.id,
    title: `${alarm.priority.toUpperCase()} alarm: ${facts.boxName}`,
    body: `${facts.siteName}: ${alarm.message}${level > 0 ? ` (not acknowledged yet, level ${level})` : ''}`,
    priority: alarm.priority,
    ackUrl,
    tag: `alarm-${alarm.id}`,
  };
}

/** Pushes one notice to each subscription of a user and logs each attempt; never throws. Returns how many were sent. */
async function pushToUser(ctx: AppContext, alarm: Alarm, facts: AlarmMailFacts, user: User, subs: StoredSubscription[], level: number, nowMs: number): Promise<number> {
  const push = ctx.push;
  if (!push) return 0;
  let sent = 0;
  for (const sub of subs) {
    let error: string | null = null;
    try {
      const link = await issueAckLink(ctx, alarm, user.id, nowMs);
      const urgent = alarm.priority === 'high' || alarm.priority === 'critical';
      const r = await push.send(sub, alarmPushPayload(alarm, facts, link, level), { urgency: urgent ? 'high' : 'normal', topic: `alarm-${alarm.id}` });
      if (r.ok) sent++;
      else error = r.reason;
    } catch (err) {
      error = (err instanceof Error ? err.message : String(err)).slice(0, 300);
      ctx.logger.warn({ err, alarmId: alarm.id, subscriptionId: sub.id }, 'alarm push failed');
    }
    try {
      await ctx.models.AlarmNotification.create({ alarmId: alarm.id, at: new Date(), channel: 'push', recipient: pushRecipient(sub), userId: user.id, status: error ? 'failed' : 'sent', error: error?.slice(0, 300) ?? null, level });
    } catch (err) {
      ctx.logger.warn({ err, alarmId: alarm.id }, 'push notification log failed');
    }
  }
  return sent;
}

/** Mails one notice per recipient and pushes one per push subscription, logs each as sent or failed (with the reason); returns how many e-mails were sent. */
export async function notifyRecipients(ctx: AppContext, alarm: Alarm, facts: AlarmMailFacts, recipients: User[], level: number, nowMs = Date.now()): Promise<number> {
  let sent = 0;
  let subs: StoredSubscription[] = [];
  try {
    subs = ctx.push ? await subscriptionsOf(ctx.sequelize, recipients.map((u) => u.id)) : [];
  } catch (err) {
    ctx.logger.warn({ err, alarmId: alarm.id }, 'push subscriptions not read; e-mail only');
  }
  for (const user of recipients) {
    let error: string | null = null;
    try {
      const link = await issueAckLink(ctx, alarm, user.id, nowMs);
      await ctx.mailer.send({ to: user.email, subject: `[Rimehold] ${alarm.priority} alarm: ${facts.boxName} (${facts.siteName})`, text: mailText(user, alarm, facts, link, level) });
      sent++;
    } catch (err) {
      error = (err instanceof Error ? err.message : String(err)).slice(0, 300);
      ctx.logger.warn({ err, alarmId: alarm.id, to: user.email }, 'alarm e-mail failed');
    }
    await ctx.models.AlarmNotification.create({ alarmId: alarm.id, at: new Date(), channel: 'email', recipient: user.email, userId: user.id, status: error ? 'failed' : 'sent', error, level });
  }
  // After every e-mail went out: a slow or failing push service never delays or stops the mail.
  for (const user of recipients) await pushToUser(ctx, alarm, facts, user, subs.filter((x) => x.userId === user.id), level, nowMs);
  if (recipients.length === 0) {
    await ctx.models.AlarmNotification.create({ alarmId: alarm.id, at: new Date(), channel: 'email', recipient: '(nobody)', userId: null, status: 'failed', error: 'No enabled recipient for this level.', level });
  }
  return sent;
}
