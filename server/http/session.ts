/** express-session with the store in MariaDB (connect-session-sequelize, table `sessions`). */
import session from 'express-session';
import connectSessionSequelize from 'connect-session-sequelize';
import type { RequestHandler } from 'express';
import type { AppContext } from '../context';

export const SESSION_COOKIE = 'sid';

/**
 * Minutes an anonymous session (one that only holds the sign-in CSRF token) lives: anyone can
 * create one with `GET /auth/csrf`, so its row must not outlive a sign-in form left open.
 */
export const ANONYMOUS_SESSION_MINUTES = 10;
/** Minutes between sweeps of expired session rows. */
export const SESSION_SWEEP_MINUTES = 5;

/** The session middleware; also used to authenticate WebSocket upgrades. Anonymous sessions expire after ANONYMOUS_SESSION_MINUTES. */
export function createSessionMiddleware(ctx: AppContext): RequestHandler {
  const SequelizeStore = connectSessionSequelize(session.Store);
  const maxAgeMs = ctx.config.SESSION_MAX_AGE_H * 3_600_000;
  const store = new SequelizeStore({ db: ctx.sequelize, tableName: 'sessions', checkExpirationInterval: SESSION_SWEEP_MINUTES * 60_000, expiration: maxAgeMs });
  const sessionMiddleware = session({
    name: SESSION_COOKIE,
    secret: ctx.config.SESSION_SECRET,
    store,
    resave: false,
    saveUninitialized: false,
    rolling: true,
    cookie: {
      httpOnly: true,
      sameSite: 'lax',
      secure: ctx.config.publicUrl.startsWith('https://'),
      maxAge: maxAgeMs,
    },
  });
  const anonymousMs = Math.min(ANONYMOUS_SESSION_MINUTES * 60_000, maxAgeMs);
  return (req, res, next) => {
    sessionMiddleware(req, res, (err?: unknown) => {
      if (err) return next(err);
      // The store takes the row's expiry from the cookie; passport's sign-in regenerates the
      // session with the full SESSION_MAX_AGE_H cookie, so only signed-out sessions are short.
      const signedIn = (req.session as { passport?: { user?: unknown } } | undefined)?.passport?.user !== undefined;
      if (req.session && !signedIn) req.session.cookie.maxAge = anonymousMs;
      next();
    });
  };
}
