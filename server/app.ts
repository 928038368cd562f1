/** createApp(): the Express application without listen(), so tests start the real thing. */
import { randomUUID } from 'node:crypto';
import { existsSync } from 'node:fs';
import path from 'node:path';
import express, { Router, type RequestHandler } from 'express';
import helmet from 'helmet';
import { pinoHttp } from 'pino-http';
import { csrfSync } from 'csrf-sync';
import { PROJECT_ROOT } from './config';
import type { AppContext } from './context';
import { apiNotFound, errorMiddleware, problems } from './http/problem';
import { createSessionMiddleware } from './http/session';
import { configurePassport } from './auth/passport';
import { authRoutes } from './auth/routes';
import { requireRole } from './auth/guards';
import { userRoutes } from './users/routes';
import { healthRoutes } from './health/routes';
import { registerFeatureRoutes } from './routes';
import { telemetryRoutes } from './telemetry/routes';
import type { SettingsService } from './telemetry/settings';

export interface CreatedApp {
  app: express.Express;
  /** The session middleware, shared with the WebSocket upgrade. */
  sessionMiddleware: RequestHandler;
  passportInitialize: RequestHandler;
  passportSession: RequestHandler;
}

/** Builds the Express app for a context. */
export function createApp(ctx: AppContext, settings: SettingsService): CreatedApp {
  const app = express();
  app.disable('x-powered-by');
  app.set('trust proxy', 'loopback');

  app.use(
    pinoHttp({
      logger: ctx.logger,
      genReqId: (req, res) => {
        const given = req.headers['x-request-id'];
        const id = typeof given === 'string' && /^[\w-]{1,64}$/.test(given) ? given : randomUUID();
        res.setHeader('x-request-id', id);
        return id;
      },
      autoLogging: { ignore: (req) => req.url === '/api/v1/health' },
      customLogLevel: (_req, res, err) => (err || res.statusCode >= 500 ? 'error' : res.statusCode >= 400 ? 'warn' : 'info'),
      serializers: { req: (req: { id: string; method: string; url: string }) => ({ id: req.id, method: req.method, url: req.url }) },
    }),
  );
  app.use(
    helmet({
      contentSecurityPolicy: { directives: { upgradeInsecureRequests: null, 'connect-src': ["'self'", 'ws:', 'wss:'] } },
      strictTransportSecurity: ctx.config.publicUrl.startsWith('https://'),
    }),
  );

  const sessionMiddleware = createSessionMiddleware(ctx);
  const passport = configurePassport(ctx.models);
  const passportInitialize = passport.initialize();
  const passportSession = passport.session();
  const csrf = csrfSync({
    getTokenFromRequest: (req) => {
      const h = req.headers['x-csrf-token'];
      return typeof h === 'string' ? h : undefined;
    },
  });

  const api = Router();
  api.use(express.json({ limit: '256kb' }));
  api.use(healthRoutes(ctx));
  api.use(sessionMiddleware, passportInitialize, passportSession);
  api.use((req, res, next) => csrf.csrfSynchronisedProtection(req, res, (err?: unknown) => next(err ? problems.csrf() : undefined)));
  api.use('/auth', authRoutes(ctx, passport, csrf));
  api.use('/users', userRoutes(ctx));
  if (ctx.config.SMTP_FAKE && ctx.mailbox) {
    const mailbox = ctx.mailbox;
    api.get('/dev/mailbox', requireRole('admin'), (_req, res) => {
      res.json(mailbox.messages);
    });
  }
  api.use(telemetryRoutes(ctx, settings));
  registerFeatureRoutes(api, ctx);
  api.use(apiNotFound);
  app.use('/api/v1', api);

  // Prometheus metrics: to loopback callers (a local scraper) or signed-in admins.
  app.get('/metrics', sessionMiddleware, passportInitialize, passportSession, async (req, res, next) => {
    const ip = req.socket.remoteAddress ?? '';
    const loopback = ip === '127.0.0.1' || ip === '::1' || ip === '::ffff:127.0.0.1';
    const forwarded = req.headers['x-forwarded-for'] !== undefined;
    if ((!loopback || forwarded) && req.user?.role !== 'admin') return next(problems.forbidden('Metrics are for administrators or local scrapers.'));
    res.type(ctx.metrics.registry.contentType).send(await ctx.metrics.registry.metrics());
  });

  const clientDir = path.join(PROJECT_ROOT, 'dist', 'client');
  if (existsSync(clientDir)) {
    app.use(express.static(clientDir, { index: false, maxAge: '1h' }));
    app.get('/{*splat}', (req, res, next) => {
      if (req.path.startsWith('/api/') || req.path === '/ws' || req.path === '/metrics') return next();
      res.sendFile(path.join(clientDir, 'index.html'));
    });
  }
  app.use(errorMiddleware(ctx.logger));
  return { app, sessionMiddleware, passportInitialize, passportSession };
}
