import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import { ApiError, configureHttp, http, humanSentence } from '@/api/http';
import { installHttpWiring } from '@/api/wiring';
import { useSessionStore } from '@/stores/session';
import { problem, json, makeFeatures, setup, stubFetch } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
});

describe('http wrapper', () => {
  beforeEach(() => {
    const { pinia, router } = setup({ role: 'technician' });
    installHttpWiring(router, pinia);
  });

  it('sends the CSRF token on state-changing requests only, with same-origin credentials', async () => {
    const { calls } = stubFetch(() => json(200, { ok: true }));
    await http.get('/fleet/status');
    await http.post('/controllers', { boxId: 1 });
    await http.del('/boxes/3');
    expect(calls.map((c) => `${c.method} ${c.url}`)).toEqual(['GET /api/v1/fleet/status', 'POST /api/v1/controllers', 'DELETE /api/v1/boxes/3']);
    expect(calls[0]?.headers['x-csrf-token']).toBeUndefined();
    expect(calls[1]?.headers['x-csrf-token']).toBe('csrf-test-token');
    expect(calls[2]?.headers['x-csrf-token']).toBe('csrf-test-token');
    expect(calls.every((c) => c.credentials === 'same-origin')).toBe(true);
    expect(calls[1]?.body).toEqual({ boxId: 1 });
  });

  it('drops empty query values and encodes the rest', async () => {
    const { calls } = stubFetch(() => json(200, { items: [], page: 1, pageSize: 25, total: 0 }));
    await http.get('/sites', { page: 2, q: 'north & south', customerId: null, x: '' });
    expect(calls[0]?.url).toBe('/api/v1/sites?page=2&q=north+%26+south');
  });

  it('maps a validation problem+json onto a typed ApiError with field errors', async () => {
    stubFetch(() =>
      problem(422, {
        type: 'https://rimehold.example.com/problems/validation',
        title: 'Invalid request body',
        detail: 'Two fields are not valid',
        errors: { name: ['Enter a name'], 'defrost.dripMin': ['Drip time (min): at most 20'] },
        requestId: 'req-1',
      }),
    );
    const err = await http.post('/boxes', {}).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ApiError);
    const e = err as ApiError;
    expect(e.status).toBe(422);
    expect(e.type).toBe('https://rimehold.example.com/problems/validation');
    expect(e.title).toBe('Invalid request body');
    expect(e.detail).toBe('Two fields are not valid');
    expect(e.fieldErrors).toEqual({ name: ['Enter a name'], 'defrost.dripMin': ['Drip time (min): at most 20'] });
    expect(e.fieldError('defrost.dripMin')).toBe('Drip time (min): at most 20');
    expect(e.requestId).toBe('req-1');
    expect(e.message).toBe('Two fields are not valid.');
    expect(e.isValidation).toBe(true);
  });

  it('uses the first field error when a problem has no detail', async () => {
    stubFetch(() => problem(400, { type: 'x', title: 'Invalid', errors: { email: ['Enter an e-mail address'] } }));
    const e = (await http.post('/users', {}).catch((x: unknown) => x)) as ApiError;
    expect(e.message).toBe('Enter an e-mail address.');
  });

  it('turns a rate limit with Retry-After into a sentence with the wait', async () => {
    stubFetch(() => problem(429, { type: 'https://rimehold.example.com/problems/rate-limited', title: 'Too many requests' }, { 'retry-after': '600' }));
    const e = (await http.post('/auth/login', {}).catch((x: unknown) => x)) as ApiError;
    expect(e.status).toBe(429);
    expect(e.retryAfterS).toBe(600);
    expect(e.message).toBe('Too many attempts. Try again in 10 minutes.');
  });

  it('handles an error without a JSON body and a network failure', async () => {
    stubFetch(() => new Response('<html>Bad gateway</html>', { status: 502, statusText: 'Bad Gateway', headers: { 'content-type': 'text/html' } }));
    const e = (await http.get('/fleet/status').catch((x: unknown) => x)) as ApiError;
    expect(e.status).toBe(502);
    expect(e.message).toBe('Bad Gateway.');
    vi.stubGlobal('fetch', vi.fn(() => Promise.reject(new TypeError('Failed to fetch'))));
    const n = (await http.get('/fleet/status').catch((x: unknown) => x)) as ApiError;
    expect(n.status).toBe(0);
    expect(n.message).toMatch(/could not reach the server/);
  });

  it('gives plain sentences for bare statuses', () => {
    expect(humanSentence({ status: 404 })).toBe('That item was not found.');
    expect(humanSentence({ status: 503 })).toMatch(/server ran into a problem/);
  });

  it('returns undefined for 204 and parsed JSON otherwise', async () => {
    stubFetch((c) => (c.method === 'DELETE' ? new Response(null, { status: 204 }) : json(200, [{ boxId: 1 }])));
    await expect(http.del('/customers/1')).resolves.toBeUndefined();
    await expect(http.get('/fleet/status')).resolves.toEqual([{ boxId: 1 }]);
  });
});

describe('401 handling', () => {
  it('clears the session and routes to sign-in with a redirect back, for a non-auth route', async () => {
    const { pinia, router } = setup({ role: 'manager' });
    installHttpWiring(router, pinia);
    stubFetch(() => json(200, []));
    await router.push('/boxes/12');
    expect(router.currentRoute.value.name).toBe('box');

    stubFetch(() => problem(401, { type: 'https://rimehold.example.com/problems/unauthenticated', title: 'Sign in first' }));
    const e = (await http.get('/boxes/12').catch((x: unknown) => x)) as ApiError;
    await flushPromises();
    // The sign-in route component is lazy; wait for the navigation to settle.
    await vi.waitFor(() => expect(router.currentRoute.value.name).toBe('sign-in'), { timeout: 5000 });

    expect(e.status).toBe(401);
    const session = useSessionStore(pinia);
    expect(session.user).toBeNull();
    expect(session.csrfToken).toBeNull();
    expect(router.currentRoute.value.name).toBe('sign-in');
    expect(router.currentRoute.value.query.redirect).toBe('/boxes/12');
  });

  it('does not redirect on a 401 from /auth/* (a wrong password is not a lost session)', async () => {
    const { pinia, router } = setup({ role: null });
    const onUnauthorized = vi.fn();
    installHttpWiring(router, pinia);
    configureHttp({ onUnauthorized });
    stubFetch(() => problem(401, { type: 'https://rimehold.example.com/problems/bad-credentials', title: 'Wrong e-mail or password' }));
    await http.post('/auth/login', { email: 'a@example.com', password: 'x' }).catch(() => undefined);
    await http.get('/auth/me').catch(() => undefined);
    expect(onUnauthorized).not.toHaveBeenCalled();
    await http.get('/fleet/status').catch(() => undefined);
    expect(onUnauthorized).toHaveBeenCalledTimes(1);
  });

  it('refreshes the CSRF token once and retries after a CSRF problem', async () => {
    const { pinia, router } = setup({ role: 'admin' });
    installHttpWiring(router, pinia);
    let posts = 0;
    const { calls } = stubFetch((c) => {
      if (c.url === '/api/v1/auth/me') return json(200, { user: useSessionStore(pinia).user, csrfToken: 'fresh-token', features: makeFeatures() });
      posts += 1;
      return posts === 1 ? problem(403, { type: 'https://rimehold.example.com/problems/csrf', title: 'Invalid CSRF token' }) : json(201, { id: 5 });
    });
    await expect(http.post('/customers', { name: 'Example Foods' })).resolves.toEqual({ id: 5 });
    const postCalls = calls.filter((c) => c.method === 'POST');
    expect(postCalls.map((c) => c.headers['x-csrf-token'])).toEqual(['csrf-test-token', 'fresh-token']);
  });
});
