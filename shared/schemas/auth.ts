import { z } from 'zod';
import { ROLES, UNIT_SYSTEMS } from '../domain';

export const PASSWORD_MIN = 10;

export const LoginBody = z.object({
  email: z.string().trim().toLowerCase().email('Enter an e-mail address'),
  password: z.string().min(1, 'Enter your password').max(200),
});
export type LoginBody = z.infer<typeof LoginBody>;

export const SetPasswordBody = z.object({
  token: z.string().min(20).max(200),
  password: z.string().min(PASSWORD_MIN, `Use at least ${PASSWORD_MIN} characters`).max(200),
});
export type SetPasswordBody = z.infer<typeof SetPasswordBody>;

export const PreferencesBody = z.object({ unitSystem: z.enum(UNIT_SYSTEMS) });
export type PreferencesBody = z.infer<typeof PreferencesBody>;

/** The signed-in user as `GET /api/v1/auth/me` and the sign-in answer present it. */
export interface SessionUser {
  id: number;
  email: string;
  name: string;
  role: (typeof ROLES)[number];
  /** Set for managers: the one customer whose sites they see. */
  customerId: number | null;
  unitSystem: (typeof UNIT_SYSTEMS)[number];
}

/** Server features the client may show: demo fault injection, the dev mailbox, the push inbox. */
export interface ServerFeatures {
  demoMode: boolean;
  devMailbox: boolean;
  /** The fake push service runs (PUSH_FAKE=1): admins may read what it received. Absent means off. */
  pushInbox?: boolean;
}

/** Answer of sign-in and of `GET /api/v1/auth/me`: the user, the CSRF token for state-changing calls, features. */
export interface SessionInfo {
  user: SessionUser;
  csrfToken: string;
  features: ServerFeatures;
}
