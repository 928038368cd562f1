/** RFC 9457 problem details: named error factories and the one error middleware. */
import { STATUS_CODES } from 'node:http';
import type { ErrorRequestHandler, RequestHandler } from 'express';
import { ZodError } from 'zod';
import type { ProblemDetails } from '../../shared/schemas/common';
import type { Logger } from '../logger';

const TYPE_BASE = 'https://rimehold.example.com/problems/';

/** An error the API answers with as application/problem+json. */
export class HttpProblem extends Error {
  constructor(
    readonly status: number,
    readonly slug: string,
    readonly title: string,
    readonly detail?: string,
    readonly errors?: Record<string, string[]>,
    readonly headers: Record<string, string> = {},
  ) {
    super(detail ?? title);
  }

  /** The body sent to the client. */
  toProblem(instance?: string, requestId?: string): ProblemDetails {
    return {
      type: TYPE_BASE + this.slug,
      title: this.title,
      status: this.status,
      ...(this.detail ? { detail: this.detail } : {}),
      ...(this.errors ? { errors: this.errors } : {}),
      ...(instance ? { instance } : {}),
      ...(requestId ? { requestId } : {}),
    };
  }
}

/** Maps zod issues to `path → messages`. */
export function zodFieldErrors(err: ZodError): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  for (const issue of err.issues) {
    const key = issue.path.length ? issue.path.join('.') : '_';
    (out[key] ??= []).push(issue.message);
  }
  return out;
}

export const problems = {
  validation: (err: ZodError, where = 'request body') =>
    new HttpProblem(400, 'validation', 'The request is not valid', `Check the ${where}: ${err.issues.map((i) => `${i.path.join('.') || 'value'}: ${i.message}`).join('; ')}`, zodFieldErrors(err)),
  badRequest: (detail: string) => new HttpProblem(400, 'bad-request', 'Bad request', detail),
  unauthenticated: () => new HttpProblem(401, 'unauthenticated', 'Sign-in required', 'Your session has ended or you are not signed in. Sign in again.'),
  badCredentials: () => new HttpProblem(401, 'bad-credentials', 'Sign-in failed', 'The e-mail address or password is wrong, or the account is disabled or locked for a while after too many failed sign-ins.'),
  forbidden: (detail = 'Your role does not allow this.') => new HttpProblem(403, 'forbidden', 'Not allowed', detail),
  csrf: () => new HttpProblem(403, 'csrf', 'Security token missing or stale', 'Reload the page and try again (the request lacked a valid x-csrf-token).'),
  notFound: (what = 'resource') => new HttpProblem(404, 'not-found', 'Not found', `No such ${what}, or it is not yours to see.`),
  conflict: (detail: string) => new HttpProblem(409, 'conflict', 'Conflict', detail),
  unprocessable: (slug: string, title: string, detail: string, errors?: Record<string, string[]>) => new HttpProblem(422, slug, title, detail, errors),
  rateLimited: (retryAfterS: number) =>
    new HttpProblem(429, 'rate-limited', 'Too many attempts', `Too many attempts from this address. Wait ${Math.ceil(retryAfterS / 60)} minutes and try again.`, undefined, { 'Retry-After': String(retryAfterS) }),
  unavailable: (detail: string) => new HttpProblem(503, 'unavailable', 'Service unavailable', detail),
};

function send(res: Parameters<RequestHandler>[1], problem: HttpProblem, instance: string, requestId?: string) {
  for (const [k, v] of Object.entries(problem.headers)) res.setHeader(k, v);
  res.status(problem.status).type('application/problem+json').send(JSON.stringify(problem.toProblem(instance, requestId)));
}

/** Slugs for client errors raised by middleware (body-parser, the router, static serving). */
const CLIENT_ERROR_SLUG: Record<number, string> = { 400: 'bad-request', 404: 'not-found', 405: 'method-not-allowed', 411: 'length-required', 413: 'too-large', 415: 'unsupported-media', 416: 'range-not-satisfiable' };

/**
 * A problem for an error a middleware raised with a 4xx `status`/`statusCode` (http-errors style):
 * the client's fault keeps its status instead of becoming a 500.
 */
export function clientErrorProblem(err: { status?: unknown; statusCode?: unknown; expose?: unknown; message?: unknown; code?: unknown }): HttpProblem | null {
  const status = typeof err.status === 'number' ? err.status : typeof err.statusCode === 'number' ? err.statusCode : NaN;
  if (!Number.isInteger(status) || status < 400 || status > 499) return null;
  const title = STATUS_CODES[status] ?? 'Bad request';
  const slug = CLIENT_ERROR_SLUG[status] ?? `http-${status}`;
  // zlib errors: a body that does not match its Content-Encoding.
  if (typeof err.code === 'string' && err.code.startsWith('Z_')) return new HttpProblem(status, 'bad-encoding', 'Body does not match its encoding', 'The request body could not be decoded with the Content-Encoding it names.');
  const detail = err.expose === true && typeof err.message === 'string' ? err.message.slice(0, 200) : undefined;
  return new HttpProblem(status, slug, title, detail);
}

/** 404 for unknown API routes. */
export const apiNotFound: RequestHandler = (req, _res, next) => next(new HttpProblem(404, 'no-route', 'Not found', `No API route ${req.method} ${req.path}`));

/** The one error middleware: known problems as-is, body-parser, CSRF and other 4xx middleware errors mapped, the rest 500 without a stack. */
export function errorMiddleware(logger: Logger): ErrorRequestHandler {
  return (err: unknown, req, res, _next) => {
    const requestId = typeof req.id === 'string' ? req.id : undefined;
    // The path only: a query may carry a secret, and problem bodies end up in client logs.
    const instance = req.originalUrl.split('?')[0] ?? '';
    if (res.headersSent) {
      logger.error({ err, requestId }, 'error after headers were sent');
      res.end();
      return;
    }
    if (err instanceof HttpProblem) return send(res, err, instance, requestId);
    if (err instanceof ZodError) return send(res, problems.validation(err), instance, requestId);
    const e = err as { type?: string; status?: number; code?: string; message?: string };
    if (e?.type === 'entity.parse.failed') return send(res, problems.badRequest('The body is not valid JSON.'), instance, requestId);
    if (e?.type === 'entity.too.large') return send(res, new HttpProblem(413, 'too-large', 'Body too large', 'The request body is larger than the limit.'), instance, requestId);
    if (e?.type === 'encoding.unsupported' || e?.type === 'charset.unsupported') return send(res, new HttpProblem(415, 'unsupported-media', 'Unsupported encoding', 'Send UTF-8 JSON.'), instance, requestId);
    if (e?.code === 'EBADCSRFTOKEN' || (e?.status === 403 && /csrf/i.test(e?.message ?? ''))) return send(res, problems.csrf(), instance, requestId);
    const clientError = e && typeof e === 'object' ? clientErrorProblem(e) : null;
    if (clientError) return send(res, clientError, instance, requestId);
    logger.error({ err, requestId }, 'unhandled error');
    send(res, new HttpProblem(500, 'internal', 'Internal error', 'Something went wrong on our side; it has been logged.'), instance, requestId);
  };
}
