/**
 * Alarm notices by e-mail, each with a single-use, expiring acknowledgement link (a random token
 * stored only as its digest, like the invitation token). Every attempt is logged per alarm.
 * Web Push is a later slice: the channel exists in the log, only e-mail is sent.
 */
import type { AppContext } from '../context';
import type { User } from '../models';
import type { Alarm } from '../models/alarms';
import { randomToken, tokenDigest } from '../auth/passwords';

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

/** Mails one notice per recipient, logs each as sent or failed (with the reason); returns how many were sent. */
export async function notifyRecipients(ctx: AppContext, alarm: Alarm, facts: AlarmMailFacts, recipients: User[], level: number, nowMs = Date.now()): Promise<number> {
  let sent = 0;
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
  if (recipients.length === 0) {
    await ctx.models.AlarmNotification.create({ alarmId: alarm.id, at: new Date(), channel: 'email', recipient: '(nobody)', userId: null, status: 'failed', error: 'No enabled recipient for this level.', level });
  }
  return sent;
}
