import { afterEach, describe, expect, it, vi } from 'vitest';
import { flushPromises } from '@vue/test-utils';
import SignInView from '@/views/auth/SignInView.vue';
import { installHttpWiring } from '@/api/wiring';
import { useSessionStore } from '@/stores/session';
import { json, makeUser, mountView, problem, setup, stubFetch } from './helpers';

afterEach(() => {
  vi.unstubAllGlobals();
  document.body.innerHTML = '';
});

async function rigSignIn(redirect?: string) {
  const ctx = setup({ role: null });
  installHttpWiring(ctx.router, ctx.pinia);
  await ctx.router.push(redirect ? { name: 'sign-in', query: { redirect } } : { name: 'sign-in' });
  const wrapper = mountView(SignInView, ctx);
  await flushPromises();
  return { ...ctx, wrapper };
}

describe('SignInView', () => {
  it('has the inputs and button the browser test relies on', async () => {
    stubFetch(() => json(401, {}));
    const { wrapper } = await rigSignIn();
    expect(wrapper.find('input[name="email"]').exists()).toBe(true);
    expect(wrapper.find('input[name="password"]').attributes('type')).toBe('password');
    expect(wrapper.find('[data-test="sign-in"]').attributes('type')).toBe('submit');
  });

  it('shows the shared LoginBody messages and sends nothing for empty or invalid input', async () => {
    const { calls } = stubFetch(() => json(200, {}));
    const { wrapper } = await rigSignIn();
    calls.length = 0;
    await wrapper.find('form').trigger('submit');
    await flushPromises();
    expect(wrapper.text()).toContain('Enter an e-mail address');
    expect(wrapper.text()).toContain('Enter your password');
    await wrapper.find('input[name="email"]').setValue('not-an-address');
    await wrapper.find('input[name="password"]').setValue('secret-pass');
    await wrapper.find('form').trigger('submit');
    await flushPromises();
    expect(wrapper.text()).toContain('Enter an e-mail address');
    expect(wrapper.text()).not.toContain('Enter your password');
    expect(calls).toHaveLength(0);
  });

  it('signs in with the form CSRF token and goes to the redirect target', async () => {
    const user = makeUser('technician');
    const { calls } = stubFetch((c) => {
      if (c.url === '/api/v1/auth/csrf') return json(200, { csrfToken: 'form-token' });
      if (c.url === '/api/v1/auth/login') return json(200, { user, csrfToken: 'session-token', features: { demoMode: true, devMailbox: false } });
      return json(200, []);
    });
    const { wrapper, router, pinia } = await rigSignIn('/tools/superheat');
    await wrapper.find('input[name="email"]').setValue('  Tech@Example.com ');
    await wrapper.find('input[name="password"]').setValue('correct horse battery');
    await wrapper.find('form').trigger('submit');
    await vi.waitFor(() => expect(router.currentRoute.value.name).toBe('tool-superheat'), { timeout: 5000 });
    const login = calls.find((c) => c.url === '/api/v1/auth/login');
    expect(login?.method).toBe('POST');
    expect(login?.headers['x-csrf-token']).toBe('form-token');
    expect(login?.body).toEqual({ email: 'tech@example.com', password: 'correct horse battery' });
    const session = useSessionStore(pinia);
    expect(session.user?.role).toBe('technician');
    expect(session.csrfToken).toBe('session-token');
    expect(session.features).toEqual({ demoMode: true, devMailbox: false });
  });

  it('shows the server problem for wrong credentials', async () => {
    stubFetch((c) =>
      c.url === '/api/v1/auth/csrf'
        ? json(200, { csrfToken: 't' })
        : problem(401, { type: 'https://rimehold.example.com/problems/bad-credentials', title: 'Unauthorized', detail: 'E-mail or password is not right' }),
    );
    const { wrapper, router } = await rigSignIn();
    await wrapper.find('input[name="email"]').setValue('manager@example.com');
    await wrapper.find('input[name="password"]').setValue('wrong');
    await wrapper.find('form').trigger('submit');
    await flushPromises();
    expect(wrapper.find('[data-test="sign-in-problem"]').text()).toBe('E-mail or password is not right.');
    expect(router.currentRoute.value.name).toBe('sign-in');
  });

  it('tells how long to wait when sign-in is rate-limited', async () => {
    stubFetch((c) =>
      c.url === '/api/v1/auth/csrf'
        ? json(200, { csrfToken: 't' })
        : problem(429, { type: 'https://rimehold.example.com/problems/rate-limited', title: 'Too many requests' }, { 'retry-after': '120' }),
    );
    const { wrapper } = await rigSignIn();
    await wrapper.find('input[name="email"]').setValue('manager@example.com');
    await wrapper.find('input[name="password"]').setValue('whatever');
    await wrapper.find('form').trigger('submit');
    await flushPromises();
    expect(wrapper.find('[data-test="sign-in-problem"]').text()).toBe('Too many attempts. Try again in 2 minutes.');
  });
});
