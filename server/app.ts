/** createApp(): the Express application without listen(), so tests start the real thing. */
import { randomUUID } from 'node:crypto';
import { existsSync } from 'node:fs';
import path from 'node:path';
import express, { Router, type RequestHandler } from 'express';
import helmet from 'helmet';
import compression from 'compression';
import { pinoHttp } from 'pino-http';
import { csrfSync } from 'csrf-sync';
import { PROJECT_ROOT } from './config';
import type { AppContext } from './context';
import { apiNotFound, errorMiddleware, HttpProblem, problems } from './http/problem';
import { loggableUrl } from './logger';
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

export interface CreateAppOptions {
  /** The built client to serve (default `<project>/dist/client`); tests point it at a directory of their own. */
  clientDir?: string;
}

/** Request body encodings the API decodes; anything else is refused with 415 before the body is read. */
const BODY_ENCODINGS = new Set(['identity', 'gzip', 'deflate']);

/**
 * Refuses request targets we cannot answer honestly: an absolute-form target (RFC 9112 §3.2.2)
 * naming a host other than our public one (we are no proxy; the Host header is the sender's to
 * choose, so it proves nothing), and a path whose percent-encoding does not decode (`/%c0%ae…`).
 * An absolute-form target for our own public host is rewritten to its path.
 */
const requestTarget = (publicHost: string): RequestHandler => (req, _res, next) => {
  if (!req.url.startsWith('/') && req.url !== '*') {
    let target: URL;
    try {
      target = new URL(req.url);
    } catch {
      return next(problems.badRequest('The request target is neither a path nor an absolute URL.'));
    }
    if (target.host !== publicHost) return next(problems.badRequest(`This server does not forward requests to other hosts (${target.host}).`));
    req.url = `${target.pathname}${target.search}`;
  }
  try {
    decodeURIComponent(req.path);
  } catch {
    return next(problems.badRequest('The path has a malformed percent-encoding.'));
  }
  next();
};

/** Refuses a body in an encoding we do not decode (415) instead of guessing. */
const bodyEncoding: RequestHandler = (req, _res, next) => {
  const encoding = (req.headers['content-encoding'] ?? 'identity').trim().toLowerCase();
  if (BODY_ENCODINGS.has(encoding)) return next();
  next(new HttpProblem(415, 'unsupported-encoding', 'Unsupported content encoding', `Send the body uncompressed, or with Content-Encoding gzip or deflate (not "${encoding.slice(0, 40)}").`));
};

/** Builds the Express app for a context. */
export function createApp(ctx: AppContext, settings: SettingsService, opts: CreateAppOptions = {}): CreatedApp {
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
      // Query values never reach the log: an invitation's set-password page carries its token there.
      serializers: { req: (req: { id: string; method: string; url: string }) => ({ id: req.id, method: req.method, url: loggableUrl(req.url) }) },
    }),
  );
  app.use(requestTarget(new URL(ctx.config.publicUrl).host));
  // gzip for the client's assets and larger API answers (the fleet status of a big fleet); the
  // one-off CSV/PDF downloads and small answers pass through (threshold 1 KiB).
  app.use(compression({ threshold: 1024 }));
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
  api.use(bodyEncoding, express.json({ limit: '256kb' }));
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

  const clientDir = opts.clientDir ?? path.join(PROJECT_ROOT, 'dist', 'client');
  if (existsSync(path.join(clientDir, 'index.html'))) {
    app.use(express.static(clientDir, { index: false, maxAge: '1h' }));
    // Single-page fallback: any other non-API path is a client route. A missing asset (under
    // /assets/ or with a file extension) is a 404, not the app. `root` keeps `send` from refusing
    // an install path with a dot folder in it (~/.cache/...): it checks dot segments below root only.
    app.get('/{*splat}', (req, res, next) => {
      if (req.path.startsWith('/api/') || req.path === '/ws' || req.path === '/metrics') return next();
      if (req.path.startsWith('/assets/') || path.posix.extname(req.path) !== '') return next(problems.notFound('file'));
      res.sendFile('index.html', { root: clientDir });
    });
  }
  app.use(errorMiddleware(ctx.logger));
  return { app, sessionMiddleware, passportInitialize, passportSession };
}
