import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { tokenDigest } from '../../server/auth/passwords';
import { factories, signIn, startTestServer } from './helpers/app';
import type { EventBusMap } from '../../server/events/bus';
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

/** Collects the bus events of one kind emitted while `act` runs. */
async function busEvents<K extends 'userAccessChanged' | 'userSessionEnded'>(name: K, act: () => Promise<unknown>): Promise<Array<EventBusMap[K][0]>> {
  const seen: Array<EventBusMap[K][0]> = [];
  const fn = (e: EventBusMap[K][0]) => seen.push(e);
  srv.ctx.bus.on(name, fn as never);
  try {
    await act();
  } finally {
    srv.ctx.bus.off(name, fn as never);
  }
  return seen;
}

describe('PATCH /api/v1/users/:id', () => {
  it('applies only the fields sent: renaming a disabled user keeps them disabled and keeps their units', async () => {
    const u = await factories(srv).user('technician');
    await u.user.update({ disabled: true, unitSystem: 'metric-kpa' });
    const res = await call(as.admin, 'patch', `/api/v1/users/${u.user.id}`, { name: 'Renamed Example' });
    expectStatus(res, 200);
    expect(res.body).toMatchObject({ name: 'Renamed Example', disabled: true, unitSystem: 'metric-kpa', role: 'technician' });
    await u.user.reload();
    expect({ name: u.user.name, disabled: u.user.disabled, unitSystem: u.user.unitSystem }).toEqual({ name: 'Renamed Example', disabled: true, unitSystem: 'metric-kpa' });
    const entry = await srv.ctx.models.AuditEntry.findOne({ where: { action: 'user.update', entityId: String(u.user.id) }, order: [['id', 'DESC']] });
    expect(JSON.parse(entry?.detail ?? '{}')).toEqual({ name: 'Renamed Example' });
    expect(entry?.userId).toBe(as.admin.userId);
  });

  it("moves a manager to another customer and tells the live hub the user's access changed", async () => {
    const other = await factories(srv).customer();
    const m = await factories(srv).user('manager', customerId);
    let res: request.Response | undefined;
    const events = await busEvents('userAccessChanged', async () => {
      res = await call(as.admin, 'patch', `/api/v1/users/${m.user.id}`, { customerId: other.id });
    });
    expectStatus(res as request.Response, 200);
    expect((await m.user.reload()).customerId).toBe(other.id);
    expect(events).toEqual([{ userId: m.user.id, changed: ['customerId'] }]);
  });

  it('clears the customer of a manager made technician, and says role and customer changed', async () => {
    const m = await factories(srv).user('manager', customerId);
    let res: request.Response | undefined;
    const events = await busEvents('userAccessChanged', async () => {
      res = await call(as.admin, 'patch', `/api/v1/users/${m.user.id}`, { role: 'technician' });
    });
    expectStatus(res as request.Response, 200);
    expect(res?.body).toMatchObject({ role: 'technician', customerId: null });
    expect(events).toEqual([{ userId: m.user.id, changed: ['role', 'customerId'] }]);
  });

  it('ends the session of a user it disables', async () => {
    const t = await factories(srv).user('technician');
    const ended = await busEvents('userSessionEnded', async () => expectStatus(await call(as.admin, 'patch', `/api/v1/users/${t.user.id}`, { disabled: true }), 200));
    expect(ended).toEqual([{ userId: t.user.id }]);
    expect((await t.user.reload()).disabled).toBe(true);
  });

  it('emits no access change for a name-only edit', async () => {
    const t = await factories(srv).user('technician');
    const events = await busEvents('userAccessChanged', async () => expectStatus(await call(as.admin, 'patch', `/api/v1/users/${t.user.id}`, { name: 'Only A Name' }), 200));
    expect(events).toEqual([]);
  });

  it('refuses a manager without a customer with a field error and changes nothing', async () => {
    const t = await factories(srv).user('technician');
    const res = await call(as.admin, 'patch', `/api/v1/users/${t.user.id}`, { role: 'manager' });
    expectProblem(res, 400, 'validation');
    expect(res.body.errors).toHaveProperty('customerId');
    expect((await t.user.reload()).role).toBe('technician');
  });

  it('refuses an admin who disables themselves or drops their own admin role (409), and changes nothing', async () => {
    const self = `/api/v1/users/${as.admin.userId}`;
    expectProblem(await call(as.admin, 'patch', self, { role: 'technician' }), 409, 'conflict');
    expectProblem(await call(as.admin, 'patch', self, { disabled: true }), 409, 'conflict');
    const row = await srv.ctx.models.User.findByPk(as.admin.userId ?? 0);
    expect({ role: row?.role, disabled: row?.disabled }).toEqual({ role: 'admin', disabled: false });
    expectStatus(await call(as.admin, 'get', '/api/v1/users'), 200);
  });

  it("refuses another user's e-mail with 409", async () => {
    const a = await factories(srv).user('technician');
    const b = await factories(srv).user('technician');
    expectProblem(await call(as.admin, 'patch', `/api/v1/users/${a.user.id}`, { email: b.email }), 409, 'conflict');
    expect((await a.user.reload()).email).toBe(a.email);
  });
});

describe('POST /api/v1/users/:id/invite', () => {
  it('mails a fresh link that replaces the previous one', async () => {
    const email = `reinvite.${Date.now()}@test.example.com`;
    const created = await call(as.admin, 'post', '/api/v1/users', { email, name: 'Rae Example', role: 'technician' });
    expectStatus(created, 201);
    const firstToken = tokenIn(mailTo(email)[0]?.text ?? '');
    const res = await call(as.admin, 'post', `/api/v1/users/${created.body.id}/invite`);
    expectStatus(res, 200);
    const mails = mailTo(email);
    expect(mails).toHaveLength(2);
    // The mailbox keeps the newest message first.
    const secondToken = tokenIn(mails[0]?.text ?? '');
    expect(secondToken).not.toBe(firstToken);
    expect((await srv.ctx.models.User.findByPk(created.body.id))?.inviteTokenHash).toBe(tokenDigest(secondToken));
    expect(await srv.ctx.models.AuditEntry.count({ where: { action: 'user.invite', entityId: String(created.body.id) } })).toBe(1);
  });
});

describe('the users routes role matrix', () => {
  const expected: Record<RoleName, 'ok' | 403 | 401> = { admin: 'ok', technician: 403, manager: 403, anonymous: 401 };
  for (const role of ROLE_NAMES) {
    it(`answers ${expected[role] === 'ok' ? 'success' : expected[role]} to ${role} on every users route`, async () => {
      const target = await factories(srv).user('technician');
      const email = `matrix.${role}.${Date.now()}@test.example.com`;
      const answers = [
        [await call(as[role], 'get', '/api/v1/users'), 200],
        [await call(as[role], 'get', `/api/v1/users/${target.user.id}`), 200],
        [await call(as[role], 'post', '/api/v1/users', { email, name: 'Matrix Example', role: 'technician' }), 201],
        [await call(as[role], 'patch', `/api/v1/users/${target.user.id}`, { name: `Matrix ${role}` }), 200],
        [await call(as[role], 'post', `/api/v1/users/${target.user.id}/invite`), 200],
      ] as const;
      for (const [res, okStatus] of answers) {
        const want = expected[role];
        if (want === 'ok') expectStatus(res, okStatus);
        else expectProblem(res, want);
      }
      // Refused writes changed nothing.
      if (expected[role] !== 'ok') {
        expect((await target.user.reload()).name).not.toBe(`Matrix ${role}`);
        expect(await srv.ctx.models.User.count({ where: { email } })).toBe(0);
      }
    });
  }

  it('refuses an admin write without the CSRF token with 403 and changes nothing', async () => {
    const target = await factories(srv).user('technician');
    const res = await as.admin.agent.patch(`/api/v1/users/${target.user.id}`).send({ name: 'No Token' });
    expectProblem(res, 403);
    expect((await target.user.reload()).name).not.toBe('No Token');
  });
});
