/** passport-local sign-in with a per-account failure lock, and the session (de)serialisation. */
import { Passport, type PassportStatic } from 'passport';
import { Strategy as LocalStrategy } from 'passport-local';
import type { SessionUser } from '../../shared/schemas/auth';
import type { Models, User } from '../models';
import { verifySecret } from './passwords';

declare global {
  // eslint-disable-next-line @typescript-eslint/no-namespace
  namespace Express {
    // passport's req.user is our SessionUser.
    // eslint-disable-next-line @typescript-eslint/no-empty-object-type
    interface User extends SessionUser {}
  }
}

/** Failed sign-ins in a row before the account is locked, and for how long. */
export const LOCK_AFTER_FAILURES = 10;
export const LOCK_MINUTES = 15;

/** Presents a user row as the session user. */
export function toSessionUser(u: User): SessionUser {
  return { id: u.id, email: u.email, name: u.name, role: u.role, customerId: u.customerId, unitSystem: u.unitSystem };
}

/** A passport instance of its own (not the module singleton) configured for these models. */
export function configurePassport(models: Models): PassportStatic {
  const passport = new Passport() as PassportStatic;
  passport.use(
    new LocalStrategy({ usernameField: 'email', passwordField: 'password' }, (email, password, done) => {
      void (async () => {
        const user = await models.User.findOne({ where: { email: email.trim().toLowerCase() } });
        // Unknown, disabled, locked and wrong password all answer the same 401 after one bcrypt
        // compare each: a different status or a faster answer would tell which addresses exist.
        const matches = await verifySecret(password, user?.passwordHash ?? null);
        if (!user || user.disabled) return done(null, false);
        if (user.lockedUntil && user.lockedUntil.getTime() > Date.now()) return done(null, false);
        if (!matches) {
          const failed = user.failedLogins + 1;
          const lock = failed >= LOCK_AFTER_FAILURES ? new Date(Date.now() + LOCK_MINUTES * 60_000) : null;
          await user.update({ failedLogins: lock ? 0 : failed, lockedUntil: lock });
          return done(null, false);
        }
        await user.update({ failedLogins: 0, lockedUntil: null, lastLoginAt: new Date() });
        return done(null, toSessionUser(user));
      })().catch(done);
    }),
  );
  passport.serializeUser((user, done) => done(null, user.id));
  passport.deserializeUser((id: number, done) => {
    models.User.findByPk(id)
      .then((u) => done(null, u && !u.disabled ? toSessionUser(u) : false))
      .catch(done);
  });
  return passport;
}
