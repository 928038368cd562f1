import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { tokenDigest } from '../../server/auth/passwords';
import { signIn, startTestServer } from './helpers/app';
import { ROLE_NAMES, call, expectProblem, expectStatus, signInRoles, tenant, type RoleName, type Sessions } from './helpers/roles';

let srv: RunningServer;
let as: Sessions;
let customerId: number;

beforeAll(async () => {
  srv = await startTestServer();
  customerId = (await tenant(srv)).customer.id;
  as = await signInRoles(srv, customerId);
});
afterAll(async () => srv.stop());

function mailTo(address: string) {
  const mailbox = srv.ctx.mailbox;
  if (!mailbox) throw new Error('the test server runs with SMTP_FAKE=1');
  return mailbox.messages.filter((m) => m.to.includes(address));
}

function tokenIn(text: string): string {
  const m = /\/set-password\?token=([A-Za-z0-9_-]+)/.exec(text);
  if (!m?.[1]) throw new Error(`no set-password link in: ${text}`);
  return m[1];
}

async function anonymous() {
  const agent = request.agent(srv.server);
  const { body } = await agent.get('/api/v1/auth/csrf').expect(200);
  return { agent, csrf: body.csrfToken as string, userId: null };
}

describe('inviting a user', () => {
  it('mails a set-password link; its token sets the password once, and the user can sign in', async () => {
    const email = `new.tech.${Date.now()}@test.example.com`;
    const res = await call(as.admin, 'post', '/api/v1/users', { email, name: 'Nia Example', role: 'technician' });
    expectStatus(res, 201);
    expect(res.body).toMatchObject({ email, role: 'technician', passwordSet: false, invitedAt: expect.any(String) });

    const mails = mailTo(email);
    expect(mails).toHaveLength(1);
    expect(mails[0]?.subject).toBe('Your Rimehold account');
    const token = tokenIn(mails[0]?.text ?? '');
    // Only a digest of the token is stored.
    const row = await srv.ctx.models.User.findByPk(res.body.id);
    expect(row?.inviteTokenHash).toBe(tokenDigest(token));
    expect(row?.inviteTokenHash).not.toContain(token);

    const anon = await anonymous();
    const password = 'a long enough password';
    expectStatus(await call(anon, 'post', '/api/v1/auth/set-password', { token, password }), 204);
    const { agent } = await signIn(srv, email, password);
    const me = await agent.get('/api/v1/auth/me').expect(200);
    expect(me.body.user).toMatchObject({ id: res.body.id, email, role: 'technician' });

    // The link is spent.
    expectProblem(await call(anon, 'post', '/api/v1/auth/set-password', { token, password: 'another long password' }), 422, 'invalid-invite');
    expect((await srv.ctx.models.User.findByPk(res.body.id))?.inviteTokenHash).toBeNull();
  });

  it('refuses a password that is too short with a field error and keeps the link usable', async () => {
    const email = `short.pw.${Date.now()}@test.example.com`;
    const res = await call(as.admin, 'post', '/api/v1/users', { email, name: 'Sam Example', role: 'manager', customerId });
    expectStatus(res, 201);
    const token = tokenIn(mailTo(email)[0]?.text ?? '');
    const anon = await anonymous();
    const bad = await call(anon, 'post', '/api/v1/auth/set-password', { token, password: 'short' });
    expectProblem(bad, 400, 'validation');
    expect(bad.body.errors).toHaveProperty('password');
    expectStatus(await call(anon, 'post', '/api/v1/auth/set-password', { token, password: 'now long enough, really' }), 204);
  });
});

describe('GET /api/v1/dev/mailbox', () => {
  it('shows an admin the captured messages', async () => {
    const email = `mailbox.${Date.now()}@test.example.com`;
    expectStatus(await call(as.admin, 'post', '/api/v1/users', { email, name: 'Max Example', role: 'technician' }), 201);
    const res = await call(as.admin, 'get', '/api/v1/dev/mailbox');
    expectStatus(res, 200);
    const found = res.body.find((m: { to: string | string[]; subject: string }) => ([] as string[]).concat(m.to).includes(email));
    expect(found).toMatchObject({ subject: 'Your Rimehold account', text: expect.stringContaining('/set-password?token=') });
  });

  const expected: Record<RoleName, number> = { admin: 200, technician: 403, manager: 403, anonymous: 401 };
  for (const role of ROLE_NAMES) {
    it(`answers ${expected[role]} to ${role}`, async () => {
      expectStatus(await call(as[role], 'get', '/api/v1/dev/mailbox'), expected[role]);
    });
  }
});
