/** Invitation e-mails with a set-password link valid for 72 hours. */
import type { AppContext } from '../context';
import type { User } from '../models';
import { randomToken, tokenDigest } from '../auth/passwords';

export const INVITE_VALID_H = 72;

/** Stores a fresh invitation token (hashed) and mails the link; returns the link (for logs in dev only). */
export async function sendInvitation(ctx: AppContext, user: User): Promise<string> {
  const link = await issueSetPasswordLink(ctx.config.publicUrl, user);
  await ctx.mailer.send({
    to: user.email,
    subject: 'Your Rimehold account',
    text: [
      `Hello ${user.name},`,
      '',
      `An account on Rimehold has been made for you (role: ${user.role}).`,
      `Choose your password here within ${INVITE_VALID_H} hours:`,
      link,
      '',
      'If you did not expect this message, you can ignore it.',
    ].join('\n'),
  });
  return link;
}

/** Stores a fresh single-use set-password token (hashed, valid INVITE_VALID_H hours) and returns its link. */
export async function issueSetPasswordLink(publicUrl: string, user: User): Promise<string> {
  const token = randomToken();
  await user.update({ inviteTokenHash: tokenDigest(token), inviteExpiresAt: new Date(Date.now() + INVITE_VALID_H * 3_600_000), invitedAt: new Date() });
  return `${publicUrl}/set-password?token=${token}`;
}
