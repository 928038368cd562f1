/** Server features (SessionInfo.features) drive what the client offers: the dev mailbox nav item. */
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import { RouterView } from 'vue-router';
import { useSessionStore, readFeatures } from '@/stores/session';
import { navFor } from '@/lib/nav';
import { installHttpWiring } from '@/api/wiring';
import { useLive } from '@/composables/useLive';
import { json, makeSessionInfo, mountView, problem, setup, stubFetch } from './helpers';

/** Stands in for the browser WebSocket so the shell's live client opens nothing. */
class SilentSocket {
  readyState = 0;
  onopen: ((ev: Event) => void) | null = null;
  onmessage: ((ev: MessageEvent) => void) | null = null;
  onclose: ((ev: CloseEvent) => void) | null = null;
  onerror: ((ev: Event) => void) | null = null;
  constructor(readonly url: string) {}
  send() {}
  close() {
    this.readyState = 3;
  }
}

beforeEach(() => {
  vi.stubGlobal('WebSocket', SilentSocket);
  // A wide screen: the side nav lists every item (no "More" drawer).
  vi.stubGlobal('matchMedia', (query: string) => ({ matches: false, media: query, addEventListener: () => undefined, removeEventListener: () => undefined }));
});
afterEach(() => {
  useLive().stop();
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

async function openShell(features: { demoMode?: boolean; devMailbox?: boolean }) {
  const ctx = setup({ role: 'admin', features });
  const { calls } = stubFetch((c) => (c.url.startsWith('/api/v1/fleet/status') ? json(200, []) : problem(404, { type: 'x', title: 'Not found' })));
  await ctx.router.push('/tools/superheat');
  const wrapper = mountView(RouterView, ctx);
  await flushPromises();
  return { ...ctx, wrapper, calls };
}

describe('session features', () => {
  it('stores the features of the sign-in answer and of GET /auth/me', async () => {
    const { pinia, router } = setup({ role: null });
    installHttpWiring(router, pinia);
    const session = useSessionStore(pinia);
    stubFetch((c) => {
      if (c.url === '/api/v1/auth/csrf') return json(200, { csrfToken: 'form' });
      if (c.url === '/api/v1/auth/login') return json(200, makeSessionInfo('admin', { features: { devMailbox: true } }));
      if (c.url === '/api/v1/auth/me') return json(200, makeSessionInfo('admin', { features: { demoMode: true } }));
      return json(200, []);
    });
    await session.signIn({ email: 'admin@example.com', password: 'long enough pass' });
    expect(session.features).toEqual({ demoMode: false, devMailbox: true });
    expect(session.showDevMailbox).toBe(true);
    expect(session.canInjectFaults).toBe(false);
    await session.restore();
    expect(session.features).toEqual({ demoMode: true, devMailbox: false });
    expect(session.showDevMailbox).toBe(false);
    expect(session.canInjectFaults).toBe(true);
  });

  it('forgets the features when the session ends', () => {
    const { pinia } = setup({ role: 'admin', features: { demoMode: true, devMailbox: true } });
    const session = useSessionStore(pinia);
    expect(session.features).toEqual({ demoMode: true, devMailbox: true });
    session.clear();
    expect(session.features).toEqual({ demoMode: false, devMailbox: false });
  });

  it('turns a feature on only for a literal true (missing or odd values mean off)', () => {
    expect(readFeatures(undefined)).toEqual({ demoMode: false, devMailbox: false });
    expect(readFeatures({ devMailbox: true })).toEqual({ demoMode: false, devMailbox: true });
    expect(readFeatures(JSON.parse('{"demoMode":"yes","devMailbox":1}'))).toEqual({ demoMode: false, devMailbox: false });
  });

  it('gives features to admins only: a technician never gets the mailbox or fault injection', () => {
    const { pinia } = setup({ role: 'technician', features: { demoMode: true, devMailbox: true } });
    const session = useSessionStore(pinia);
    expect(session.showDevMailbox).toBe(false);
    expect(session.canInjectFaults).toBe(false);
    expect(navFor('technician', session.features).flatMap((g) => g.items.map((i) => i.name))).not.toContain('mailbox');
  });
});

describe('app shell navigation', () => {
  it('shows the Dev mailbox item to an admin when the server reports devMailbox, without asking /dev/mailbox', async () => {
    const { wrapper, calls } = await openShell({ devMailbox: true });
    expect(wrapper.find('[data-test="app-shell"]').exists()).toBe(true);
    const item = wrapper.find('[data-test="nav-mailbox"]');
    expect(item.exists()).toBe(true);
    expect(item.text()).toBe('Dev mailbox');
    expect(calls.map((c) => c.url)).not.toContain('/api/v1/dev/mailbox');
  });

  it('hides the Dev mailbox item when devMailbox is false, and does not probe for it', async () => {
    const { wrapper, calls } = await openShell({ devMailbox: false, demoMode: true });
    expect(wrapper.find('[data-test="nav-users"]').exists()).toBe(true);
    expect(wrapper.find('[data-test="nav-mailbox"]').exists()).toBe(false);
    expect(calls.some((c) => c.url.includes('/dev/mailbox'))).toBe(false);
    // The shell did load the fleet, so the fetch stub was in use when a probe would have happened.
    expect(calls.map((c) => c.url)).toContain('/api/v1/fleet/status');
  });

  it('adds the item when a later GET /auth/me reports the feature', async () => {
    const { wrapper, pinia } = await openShell({ devMailbox: false });
    expect(wrapper.find('[data-test="nav-mailbox"]').exists()).toBe(false);
    useSessionStore(pinia).apply(makeSessionInfo('admin', { features: { devMailbox: true } }));
    await flushPromises();
    expect(wrapper.find('[data-test="nav-mailbox"]').exists()).toBe(true);
  });
});
