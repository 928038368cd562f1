/** /api/v1/auth: CSRF token, sign-in, sign-out, me, preferences, set password from an invitation. */
import { Router, type Request } from 'express';
import { rateLimit } from 'express-rate-limit';
import type { csrfSync } from 'csrf-sync';
import type { PassportStatic } from 'passport';
import { Op } from 'sequelize';
import { LoginBody, PreferencesBody, SetPasswordBody, type SessionInfo, type SessionUser } from '../../shared/schemas/auth';
import type { AppContext } from '../context';
import { problems } from '../http/problem';
import { parseBody } from '../http/validate';
import { audit } from '../audit/service';
import { currentUser, requireAuth } from './guards';
import { hashSecret, tokenDigest } from './passwords';
import { toSessionUser } from './passport';

type Csrf = ReturnType<typeof csrfSync>;

function authenticate(passport: PassportStatic, req: Request): Promise<SessionUser | false> {
  return new Promise((resolve, reject) => {
    passport.authenticate('local', { session: false }, (err: unknown, user: SessionUser | false) => (err ? reject(err) : resolve(user)))(req, req.res, reject);
  });
}

function logIn(req: Request, user: SessionUser): Promise<void> {
  // passport 0.7 regenerates the session on logIn (session fixation).
  return new Promise((resolve, reject) => req.logIn(user, (err) => (err ? reject(err) : resolve())));
}

function features(ctx: AppContext): SessionInfo['features'] {
  return { demoMode: ctx.config.DEMO_MODE, devMailbox: ctx.config.SMTP_FAKE && ctx.mailbox !== null, pushInbox: ctx.config.PUSH_FAKE && Boolean(ctx.push?.fake) };
}

/** The auth router. */
export function authRoutes(ctx: AppContext, passport: PassportStatic, csrf: Csrf): Router {
  const r = Router();
  const { models } = ctx;

  const loginLimiter = rateLimit({
    windowMs: 15 * 60_000,
    limit: ctx.config.LOGIN_RATE_LIMIT,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    skipSuccessfulRequests: true,
    handler: (_req, _res, next, options) => next(problems.rateLimited(Math.ceil(options.windowMs / 1000))),
  });

  r.get('/csrf', (req, res) => {
    res.json({ csrfToken: csrf.generateToken(req) });
  });

  r.post('/login', loginLimiter, async (req, res) => {
    parseBody(LoginBody, req);
    const user = await authenticate(passport, req);
    if (!user) throw problems.badCredentials();
    await logIn(req, user);
    const body: SessionInfo = { user, csrfToken: csrf.generateToken(req, true), features: features(ctx) };
    ctx.logger.info({ userId: user.id, requestId: req.id }, 'signed in');
    res.json(body);
  });

  r.post('/logout', requireAuth, async (req, res) => {
    const userId = currentUser(req).id;
    await new Promise<void>((resolve, reject) => req.logout((err) => (err ? reject(err) : resolve())));
    await new Promise<void>((resolve) => req.session.destroy(() => resolve()));
    ctx.bus.emit('userSessionEnded', { userId });
    res.clearCookie('sid').status(204).end();
  });

  r.get('/me', requireAuth, (req, res) => {
    const body: SessionInfo = { user: currentUser(req), csrfToken: csrf.generateToken(req), features: features(ctx) };
    res.json(body);
  });

  r.put('/me/preferences', requireAuth, async (req, res) => {
    const body = parseBody(PreferencesBody, req);
    const user = await models.User.findByPk(currentUser(req).id);
    if (!user) throw problems.unauthenticated();
    await user.update({ unitSystem: body.unitSystem });
    res.json(toSessionUser(user));
  });

  r.post('/set-password', async (req, res) => {
    const body = parseBody(SetPasswordBody, req);
    const user = await models.User.findOne({
      where: { inviteTokenHash: tokenDigest(body.token), inviteExpiresAt: { [Op.gt]: new Date() } },
    });
    if (!user) throw problems.unprocessable('invalid-invite', 'Link not valid', 'This set-password link is unknown, used or expired. Ask your administrator for a new invitation.');
    await user.update({ passwordHash: await hashSecret(body.password), inviteTokenHash: null, inviteExpiresAt: null, failedLogins: 0, lockedUntil: null });
    // Sockets opened under the old password are authorised afresh.
    ctx.bus.emit('userAccessChanged', { userId: user.id, changed: ['password'] });
    await audit(models, req, { action: 'user.password-set', entityType: 'user', entityId: user.id, customerId: user.customerId });
    res.status(204).end();
  });

  return r;
}
