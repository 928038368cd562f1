import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import type { RunningServer } from '../../server/main';
import { factories, signIn, startTestServer } from './helpers/app';

let srv: RunningServer;
let f: ReturnType<typeof factories>;

beforeAll(async () => {
  srv = await startTestServer();
  f = factories(srv);
});
afterAll(async () => srv.stop());

function sidOf(res: request.Response): string | undefined {
  const cookies = ([] as string[]).concat(res.headers['set-cookie'] ?? []);
  return cookies.find((c) => c.startsWith('sid='))?.split(';')[0];
}

describe('POST /api/v1/auth/login', () => {
  it('signs in with the right password and answers the session user without secrets', async () => {
    const { email, password, user } = await f.user('technician');
    const { agent } = await signIn(srv, email, password);
    const me = await agent.get('/api/v1/auth/me').expect(200);
    expect(me.body.user).toMatchObject({ id: user.id, email, role: 'technician' });
    expect(JSON.stringify(me.body)).not.toMatch(/passwordHash|password_hash|\$2[aby]\$/);
  });

  it('refuses a wrong password with a problem+json 401', async () => {
    const { email } = await f.user('admin');
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    const res = await agent.post('/api/v1/auth/login').set('x-csrf-token', body.csrfToken).send({ email, password: 'wrong password!' });
    expect(res.status).toBe(401);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(res.body.type).toMatch(/bad-credentials$/);
  });

  it('issues a new session id at sign-in (no session fixation) and the pre-login CSRF token stops working', async () => {
    const { email, password } = await f.user('admin');
    const agent = request.agent(srv.server);
    const pre = await agent.get('/api/v1/auth/csrf');
    const preSid = sidOf(pre);
    expect(preSid).toBeDefined();
    const login = await agent.post('/api/v1/auth/login').set('x-csrf-token', pre.body.csrfToken).send({ email, password }).expect(200);
    const postSid = sidOf(login);
    expect(postSid).toBeDefined();
    expect(postSid).not.toBe(preSid);
    // The old cookie is no longer a signed-in session.
    await request(srv.server).get('/api/v1/auth/me').set('Cookie', preSid ?? '').expect(401);
    // The token from before sign-in is rejected; the new one works.
    await agent.put('/api/v1/auth/me/preferences').set('x-csrf-token', pre.body.csrfToken).send({ unitSystem: 'metric-bar' }).expect(403);
    await agent.put('/api/v1/auth/me/preferences').set('x-csrf-token', login.body.csrfToken).send({ unitSystem: 'metric-bar' }).expect(200);
  });

  it('sets an httpOnly SameSite session cookie', async () => {
    const res = await request(srv.server).get('/api/v1/auth/csrf');
    const cookie = ([] as string[]).concat(res.headers['set-cookie'] ?? []).find((c) => c.startsWith('sid='));
    expect(cookie).toMatch(/HttpOnly/i);
    expect(cookie).toMatch(/SameSite=Lax/i);
  });

  it('rejects a state-changing request without a CSRF token', async () => {
    const { email, password } = await f.user('admin');
    const { agent } = await signIn(srv, email, password);
    const res = await agent.put('/api/v1/auth/me/preferences').send({ unitSystem: 'metric-kpa' });
    expect(res.status).toBe(403);
    expect(res.body.type).toMatch(/csrf$/);
    // Nothing changed.
    const me = await agent.get('/api/v1/auth/me');
    expect(me.body.user.unitSystem).toBe('imperial');
  });

  it('validates the body and answers field errors as problem+json', async () => {
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    const res = await agent.post('/api/v1/auth/login').set('x-csrf-token', body.csrfToken).send({ email: 'not-an-email', password: '' });
    expect(res.status).toBe(400);
    expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
    expect(Object.keys(res.body.errors)).toEqual(expect.arrayContaining(['email', 'password']));
  });

  it('answers malformed JSON with a 400 problem and no stack trace', async () => {
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    const res = await agent.post('/api/v1/auth/login').set('x-csrf-token', body.csrfToken).set('content-type', 'application/json').send('{"email":');
    expect(res.status).toBe(400);
    expect(res.text).not.toMatch(/at .*\.js:\d+/);
  });
});

describe('POST /api/v1/auth/logout', () => {
  it('ends the session: the old cookie no longer signs in', async () => {
    const { email, password } = await f.user('technician');
    const { agent, csrf } = await signIn(srv, email, password);
    const me = await agent.get('/api/v1/auth/me').expect(200);
    const cookie = me.request.getHeader?.('Cookie');
    await agent.post('/api/v1/auth/logout').set('x-csrf-token', csrf).expect(204);
    await agent.get('/api/v1/auth/me').expect(401);
    if (typeof cookie === 'string') await request(srv.server).get('/api/v1/auth/me').set('Cookie', cookie).expect(401);
  });
});

describe('sign-in rate limit', () => {
  it('answers 429 after LOGIN_RATE_LIMIT failed attempts from one address', async () => {
    const limited = await startTestServer({ LOGIN_RATE_LIMIT: '3' });
    try {
      const agent = request.agent(limited.server);
      const { body } = await agent.get('/api/v1/auth/csrf');
      const statuses: number[] = [];
      for (let i = 0; i < 4; i++) {
        const r = await agent.post('/api/v1/auth/login').set('x-csrf-token', body.csrfToken).send({ email: 'nobody@test.example.com', password: 'guess' + i });
        statuses.push(r.status);
      }
      expect(statuses).toEqual([401, 401, 401, 429]);
    } finally {
      await limited.stop();
    }
  });

  it('locks an account after 10 failed sign-ins even from changing addresses, refusing even the right password', async () => {
    const { email, password, user } = await f.user('technician');
    for (let i = 0; i < 10; i++) {
      const agent = request.agent(srv.server);
      const { body } = await agent.get('/api/v1/auth/csrf');
      await agent.post('/api/v1/auth/login').set('X-Forwarded-For', `127.0.0.${i + 10}`).set('x-csrf-token', body.csrfToken).send({ email, password: 'wrong-' + i });
    }
    await user.reload();
    expect(user.lockedUntil?.getTime()).toBeGreaterThan(Date.now());
    const agent = request.agent(srv.server);
    const { body } = await agent.get('/api/v1/auth/csrf');
    const res = await agent.post('/api/v1/auth/login').set('x-csrf-token', body.csrfToken).send({ email, password });
    // Still refused with the right password, and answered like any failed sign-in (no 423 that tells the account exists).
    expect(res.status).toBe(401);
    expect(res.body.type).toMatch(/bad-credentials$/);
    await agent.get('/api/v1/auth/me').expect(401);
  });
});
