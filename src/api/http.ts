/** Fetch wrapper for /api/v1: CSRF header, same-origin cookies, problem+json → ApiError, 401 hook. */
import type { ProblemDetails } from '@shared/schemas/common';

export const API_BASE = '/api/v1';

/** An HTTP failure in a shape screens can show: a human sentence plus the problem's parts. */
export class ApiError extends Error {
  readonly status: number;
  readonly type: string;
  readonly title: string;
  readonly detail: string | undefined;
  /** Field errors of a validation problem: path (e.g. `defrost.dripMin`) → messages. */
  readonly fieldErrors: Record<string, string[]>;
  readonly requestId: string | undefined;
  /** Seconds from a Retry-After header (rate limits), when sent. */
  readonly retryAfterS: number | undefined;

  constructor(init: {
    status: number;
    type?: string;
    title: string;
    detail?: string;
    fieldErrors?: Record<string, string[]>;
    requestId?: string;
    retryAfterS?: number;
    message?: string;
  }) {
    super(init.message ?? humanSentence(init));
    this.name = 'ApiError';
    this.status = init.status;
    this.type = init.type ?? 'about:blank';
    this.title = init.title;
    this.detail = init.detail;
    this.fieldErrors = init.fieldErrors ?? {};
    this.requestId = init.requestId;
    this.retryAfterS = init.retryAfterS;
  }

  /** First message for a field path, if the server sent one. */
  fieldError(path: string): string | undefined {
    return this.fieldErrors[path]?.[0];
  }

  get isValidation(): boolean {
    return this.status === 400 || this.status === 422 || Object.keys(this.fieldErrors).length > 0;
  }
}

function minutesText(s: number): string {
  if (s < 60) return `${s} seconds`;
  const m = Math.ceil(s / 60);
  return m === 1 ? 'a minute' : `${m} minutes`;
}

/** One sentence a person can read, built from a problem. */
export function humanSentence(p: { status: number; title?: string; detail?: string; retryAfterS?: number; fieldErrors?: Record<string, string[]> }): string {
  const end = (s: string) => (/[.!?]$/.test(s) ? s : `${s}.`);
  if (p.status === 0) return 'Rimehold could not reach the server. Check the connection and try again.';
  if (p.status === 429) {
    const wait = p.retryAfterS !== undefined ? ` Try again in ${minutesText(p.retryAfterS)}.` : ' Wait a little and try again.';
    return `Too many attempts.${wait}`;
  }
  if (p.detail) return end(p.detail);
  const fields = Object.values(p.fieldErrors ?? {}).flat();
  if (fields.length > 0 && fields[0]) return end(fields[0]);
  if (p.title) return end(p.title);
  if (p.status === 401) return 'Please sign in.';
  if (p.status === 403) return 'You are not allowed to do that.';
  if (p.status === 404) return 'That item was not found.';
  if (p.status >= 500) return 'The server ran into a problem. Try again in a moment.';
  return `The request failed (HTTP ${p.status}).`;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function parseFieldErrors(v: unknown): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  if (!isRecord(v)) return out;
  for (const [k, msgs] of Object.entries(v)) {
    if (Array.isArray(msgs)) out[k] = msgs.filter((m): m is string => typeof m === 'string');
    else if (typeof msgs === 'string') out[k] = [msgs];
  }
  return out;
}

function parseRetryAfter(h: string | null): number | undefined {
  if (!h) return undefined;
  const n = Number(h);
  if (Number.isFinite(n) && n >= 0) return Math.ceil(n);
  const at = Date.parse(h);
  return Number.isNaN(at) ? undefined : Math.max(0, Math.ceil((at - Date.now()) / 1000));
}

/** Builds an ApiError from a failed response (problem+json, other JSON, or anything else). */
export async function errorFromResponse(res: Response): Promise<ApiError> {
  const retryAfterS = parseRetryAfter(res.headers.get('retry-after'));
  const ctype = res.headers.get('content-type') ?? '';
  let body: unknown = null;
  if (ctype.includes('json')) {
    try {
      body = await res.json();
    } catch {
      body = null;
    }
  }
  if (isRecord(body)) {
    const p = body as Partial<ProblemDetails> & Record<string, unknown>;
    return new ApiError({
      status: typeof p.status === 'number' ? p.status : res.status,
      type: typeof p.type === 'string' ? p.type : undefined,
      title: typeof p.title === 'string' ? p.title : res.statusText || `HTTP ${res.status}`,
      detail: typeof p.detail === 'string' ? p.detail : typeof p.message === 'string' ? p.message : undefined,
      fieldErrors: parseFieldErrors(p.errors),
      requestId: typeof p.requestId === 'string' ? p.requestId : undefined,
      retryAfterS,
    });
  }
  return new ApiError({ status: res.status, title: res.statusText || `HTTP ${res.status}`, retryAfterS });
}

export interface HttpConfig {
  /** The current CSRF token (session store). */
  getCsrfToken: () => string | null;
  /** Called once per 401 from a non-/auth route. */
  onUnauthorized: (path: string) => void;
  /** Called when a CSRF problem (403) arrives: should fetch a fresh token; the request is retried once. */
  refreshCsrf?: () => Promise<string | null>;
}

const config: HttpConfig = {
  getCsrfToken: () => null,
  onUnauthorized: () => undefined,
};

/** Wires the wrapper to the session store and router (see src/api/wiring.ts). */
export function configureHttp(c: Partial<HttpConfig>): void {
  Object.assign(config, c);
}

export type Query = Record<string, string | number | boolean | null | undefined>;

export interface RequestOptions {
  method?: 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE';
  query?: Query;
  body?: unknown;
  signal?: AbortSignal;
  /** Token to send instead of the session's (sign-in form). */
  csrfToken?: string;
}

export function buildUrl(path: string, query?: Query): string {
  const url = `${API_BASE}${path.startsWith('/') ? path : `/${path}`}`;
  if (!query) return url;
  const qs = new URLSearchParams();
  for (const [k, v] of Object.entries(query)) if (v !== undefined && v !== null && v !== '') qs.set(k, String(v));
  const s = qs.toString();
  return s ? `${url}?${s}` : url;
}

const isAuthPath = (path: string) => /^\/?auth(\/|$)/.test(path);
const isCsrfProblem = (e: ApiError) => e.status === 403 && /csrf/i.test(`${e.type} ${e.title}`);

/** Sends one request; resolves to the parsed JSON (undefined for 204), rejects with ApiError. */
export async function request<T>(path: string, opts: RequestOptions = {}, retried = false): Promise<T> {
  const method = opts.method ?? 'GET';
  const headers: Record<string, string> = { accept: 'application/json, application/problem+json' };
  if (method !== 'GET') {
    const token = opts.csrfToken ?? config.getCsrfToken();
    if (token) headers['x-csrf-token'] = token;
  }
  let body: string | undefined;
  if (opts.body !== undefined) {
    headers['content-type'] = 'application/json';
    body = JSON.stringify(opts.body);
  }
  let res: Response;
  try {
    res = await fetch(buildUrl(path, opts.query), { method, headers, body, credentials: 'same-origin', signal: opts.signal });
  } catch (e) {
    if (e instanceof DOMException && e.name === 'AbortError') throw e;
    throw new ApiError({ status: 0, title: 'Network error' });
  }
  if (!res.ok) {
    const err = await errorFromResponse(res);
    if (err.status === 401 && !isAuthPath(path)) config.onUnauthorized(path);
    if (!retried && method !== 'GET' && !opts.csrfToken && isCsrfProblem(err) && config.refreshCsrf) {
      const fresh = await config.refreshCsrf().catch(() => null);
      if (fresh) return request<T>(path, opts, true);
    }
    throw err;
  }
  if (res.status === 204) return undefined as T;
  const ctype = res.headers.get('content-type') ?? '';
  if (!ctype.includes('json')) return (await res.text()) as T;
  return (await res.json()) as T;
}

export const http = {
  get: <T>(path: string, query?: Query, signal?: AbortSignal) => request<T>(path, { query, signal }),
  post: <T>(path: string, body?: unknown, opts: Omit<RequestOptions, 'method' | 'body'> = {}) => request<T>(path, { ...opts, method: 'POST', body }),
  put: <T>(path: string, body?: unknown) => request<T>(path, { method: 'PUT', body }),
  patch: <T>(path: string, body?: unknown) => request<T>(path, { method: 'PATCH', body }),
  del: <T = void>(path: string) => request<T>(path, { method: 'DELETE' }),
};

/** A message for anything thrown by a request. */
export function errorMessage(e: unknown): string {
  if (e instanceof ApiError) return e.message;
  if (e instanceof Error) return e.message;
  return 'Something went wrong.';
}
