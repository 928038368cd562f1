/** Signed-in sessions for each role, two tenants with a site, box and controller each, and request helpers. */
import { randomUUID } from 'node:crypto';
import request from 'supertest';
import { expect } from 'vitest';
import type { RunningServer } from '../../../server/main';
import type { EventBusMap } from '../../../server/events/bus';
import { hashDeviceSecret, newDeviceSecret } from '../../../server/controllers/secrets';
import { factories, signIn, type Agent } from './app';

export type RoleName = 'admin' | 'technician' | 'manager' | 'anonymous';
export const ROLE_NAMES: RoleName[] = ['admin', 'technician', 'manager', 'anonymous'];

export interface Session {
  agent: Agent;
  csrf: string;
  userId: number | null;
}

export type Sessions = Record<RoleName, Session>;

/**
 * Signs in an admin, a technician and a manager of `managerCustomerId`; `anonymous` holds a CSRF
 * token but no sign-in, so its writes reach the role check (401) instead of the CSRF check (403).
 */
export async function signInRoles(srv: RunningServer, managerCustomerId: number): Promise<Sessions> {
  const f = factories(srv);
  const out: Partial<Sessions> = {};
  for (const [role, customerId] of [['admin', null], ['technician', null], ['manager', managerCustomerId]] as const) {
    const u = await f.user(role, customerId);
    const s = await signIn(srv, u.email, u.password);
    out[role] = { ...s, userId: u.user.id };
  }
  const agent = request.agent(srv.server);
  const pre = await agent.get('/api/v1/auth/csrf').expect(200);
  out.anonymous = { agent, csrf: pre.body.csrfToken as string, userId: null };
  return out as Sessions;
}

export type Method = 'get' | 'post' | 'put' | 'patch' | 'delete';

/** Sends a request as a session, with its CSRF token. */
export function call(s: Session, method: Method, url: string, body?: object): request.Test {
  const t = s.agent[method](url).set('x-csrf-token', s.csrf);
  return body === undefined ? t : t.send(body);
}

/** Asserts an error answer is problem+json with the status and (optionally) the type slug. */
export function expectProblem(res: request.Response, status: number, slug?: string): void {
  expect(res.status, `answer: ${res.text}`).toBe(status);
  expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
  expect(res.body.status).toBe(status);
  if (slug) expect(res.body.type).toBe(`https://rimehold.example.com/problems/${slug}`);
}

/** Asserts a status, printing the body when it differs. */
export function expectStatus(res: request.Response, status: number): void {
  expect(res.status, `answer: ${res.text}`).toBe(status);
  if (status >= 400) expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
}

const uniq = () => randomUUID().slice(0, 8);

/** A unique controller serial. */
export function serial(): string {
  return `TST-${uniq()}`;
}

/** One tenant: a customer with a site, a box on it and a provisioned controller on the box. */
export async function tenant(srv: RunningServer) {
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id);
  const box = await f.box(site.id, customer.id);
  const controller = await srv.ctx.models.Controller.create({
    boxId: box.id,
    serial: serial(),
    secretHash: hashDeviceSecret(newDeviceSecret()),
    valveFullSteps: 1600,
    firmware: null,
    lastSeenAt: null,
    secretRotatedAt: null,
  });
  return { customer, site, box, controller };
}

export type Tenant = Awaited<ReturnType<typeof tenant>>;

type BoxChanged = EventBusMap['boxChanged'][0];
type Revoked = EventBusMap['controllerRevoked'][0];

/** Records `boxChanged` events of the server's bus until `stop()`. */
export function recordBoxChanged(srv: RunningServer) {
  const events: BoxChanged[] = [];
  const listener = (e: BoxChanged) => {
    events.push(e);
  };
  srv.ctx.bus.on('boxChanged', listener);
  return { events, stop: () => srv.ctx.bus.off('boxChanged', listener) };
}

/** Records `controllerRevoked` events of the server's bus until `stop()`. */
export function recordRevoked(srv: RunningServer) {
  const events: Revoked[] = [];
  const listener = (e: Revoked) => {
    events.push(e);
  };
  srv.ctx.bus.on('controllerRevoked', listener);
  return { events, stop: () => srv.ctx.bus.off('controllerRevoked', listener) };
}
