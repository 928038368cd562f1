/** express-session with the store in MariaDB (connect-session-sequelize, table `sessions`). */
import session from 'express-session';
import connectSessionSequelize from 'connect-session-sequelize';
import type { RequestHandler } from 'express';
import type { AppContext } from '../context';

export const SESSION_COOKIE = 'sid';

/** The session middleware; also used to authenticate WebSocket upgrades. */
export function createSessionMiddleware(ctx: AppContext): RequestHandler {
  const SequelizeStore = connectSessionSequelize(session.Store);
  const maxAgeMs = ctx.config.SESSION_MAX_AGE_H * 3_600_000;
  const store = new SequelizeStore({ db: ctx.sequelize, tableName: 'sessions', checkExpirationInterval: 15 * 60_000, expiration: maxAgeMs });
  return session({
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
}
