/**
 * The first administrator of a real install (no demo accounts there): created from the command
 * line with a one-time set-password link, so no password ever travels in a file or a log.
 */
import { z } from 'zod';
import type { Models, User } from '../models';
import { issueSetPasswordLink } from '../users/invite';

export const FirstAdminInput = z.object({
  email: z.string().trim().toLowerCase().email('Give a valid e-mail address with --email'),
  name: z.string().trim().min(1, 'Give a name with --name').max(80),
  /** Issue a new link for an existing administrator (lost link, forgotten password). */
  reissue: z.boolean().default(false),
});
export type FirstAdminInput = z.input<typeof FirstAdminInput>;

/** True when at least one enabled administrator exists. */
export async function anyAdminExists(models: Models): Promise<boolean> {
  return (await models.User.count({ where: { role: 'admin', disabled: false } })) > 0;
}

/** Creates an administrator without a password (or re-issues the link of an existing one); returns the one-time link. */
export async function createFirstAdmin(models: Models, publicUrl: string, raw: FirstAdminInput): Promise<{ user: User; link: string; created: boolean }> {
  const input = FirstAdminInput.parse(raw);
  const existing = await models.User.findOne({ where: { email: input.email } });
  if (existing) {
    if (!input.reissue) throw new Error(`A user with e-mail ${input.email} already exists (add --reissue to send them a new set-password link).`);
    if (existing.role !== 'admin') throw new Error(`${input.email} exists but is not an administrator; change the role from the Users page.`);
    if (existing.disabled) await existing.update({ disabled: false });
    return { user: existing, link: await issueSetPasswordLink(publicUrl, existing), created: false };
  }
  const user = await models.User.create({
    email: input.email,
    name: input.name,
    role: 'admin',
    customerId: null,
    passwordHash: null,
    inviteTokenHash: null,
    inviteExpiresAt: null,
    invitedAt: null,
    lastLoginAt: null,
    lockedUntil: null,
  });
  return { user, link: await issueSetPasswordLink(publicUrl, user), created: true };
}
