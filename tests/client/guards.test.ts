import { afterEach, describe, expect, it, vi } from 'vitest';
import type { Role } from '@shared/domain';
import { authGuard, safeRedirect } from '@/router';
import { installHttpWiring } from '@/api/wiring';
import { navFor } from '@/lib/nav';
import { json, problem, setup, stubFetch } from './helpers';

afterEach(() => vi.unstubAllGlobals());

function fakeSession(role: Role | null) {
  return {
    ensureLoaded: vi.fn(async () => undefined),
    isSignedIn: role !== null,
    hasRole: (roles: readonly Role[] | undefined) => role !== null && (!roles || roles.includes(role)),
  };
}

async function decide(role: Role | null, path: string) {
  const { router } = setup({ role: null });
  const to = router.resolve(path);
  return authGuard(to, fakeSession(role));
}

describe('route guards', () => {
  const cases: [Role, string, boolean][] = [
    ['manager', '/', true],
    ['manager', '/boxes/3', true],
    ['manager', '/tools/pressure-temperature', true],
    ['manager', '/tools/superheat', true],
    ['manager', '/customers', false],
    ['manager', '/boxes', false],
    ['manager', '/admin/users', false],
    ['manager', '/admin/controllers', false],
    ['technician', '/customers', true],
    ['technician', '/sites', true],
    ['technician', '/boxes', true],
    ['technician', '/admin/users', false],
    ['technician', '/admin/mailbox', false],
    ['admin', '/admin/users', true],
    ['admin', '/admin/controllers', true],
    ['admin', '/admin/mailbox', true],
  ];
  it.each(cases)('%s → %s allowed: %s', async (role, path, allowed) => {
    const r = await decide(role, path);
    if (allowed) expect(r).toBe(true);
    else expect(r).toMatchObject({ name: 'forbidden', query: { from: path } });
  });

  it('sends a signed-out visitor to sign-in with a redirect back', async () => {
    expect(await decide(null, '/admin/users?page=2')).toEqual({ name: 'sign-in', query: { redirect: '/admin/users?page=2' } });
    expect(await decide(null, '/')).toEqual({ name: 'sign-in', query: {} });
    expect(await decide(null, '/set-password?token=abc')).toBe(true);
  });

  it('sends a signed-in user away from the sign-in page, only to same-app redirects', async () => {
    expect(await decide('technician', '/sign-in')).toEqual({ name: 'fleet' });
    expect(await decide('technician', '/sign-in?redirect=/tools/superheat')).toBe('/tools/superheat');
    expect(await decide('technician', '/sign-in?redirect=//evil.example.net/')).toEqual({ name: 'fleet' });
    expect(safeRedirect('https://evil.example.net')).toBeNull();
    expect(safeRedirect('/\\evil.example.net')).toBeNull();
  });

  it('asks the server who is signed in on the first navigation of a full router', async () => {
    const ctx = setup({ role: null, unknownSession: true });
    installHttpWiring(ctx.router, ctx.pinia);
    const { calls } = stubFetch((c) => (c.url === '/api/v1/auth/me' ? problem(401, { type: 'x', title: 'Unauthorized' }) : json(200, [])));
    await ctx.router.push('/boxes/5');
    expect(calls.map((c) => c.url)).toEqual(['/api/v1/auth/me']);
    expect(ctx.router.currentRoute.value.name).toBe('sign-in');
    expect(ctx.router.currentRoute.value.query.redirect).toBe('/boxes/5');
  });
});

describe('navigation by role', () => {
  const RECORDS = ['visits', 'refrigerant-log', 'food-log', 'trends'];
  const names = (role: Role, devMailbox = false) => navFor(role, { demoMode: false, devMailbox }).flatMap((g) => g.items.map((i) => i.name));
  it('shows managers the fleet, the field tools and the records only', () => {
    expect(names('manager')).toEqual(['fleet', 'alarms', 'tool-pt', 'tool-superheat', ...RECORDS]);
  });
  it('adds customers, sites and boxes for technicians', () => {
    expect(names('technician')).toEqual(['fleet', 'alarms', 'tool-pt', 'tool-superheat', ...RECORDS, 'customers', 'sites', 'boxes']);
  });
  it('adds users and controllers for admins, and the mailbox only when the server has it', () => {
    expect(names('admin')).toContain('users');
    expect(names('admin')).toContain('controllers');
    expect(names('admin')).not.toContain('mailbox');
    expect(names('admin', true)).toContain('mailbox');
  });
});
