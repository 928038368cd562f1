/** Test helpers for client tests: a fetch stub, a signed-in session, and a mount with Naive providers. */
import { defineComponent, h, type Component } from 'vue';
import { mount } from '@vue/test-utils';
import { createPinia, setActivePinia, type Pinia } from 'pinia';
import { createMemoryHistory, type Router } from 'vue-router';
import { NConfigProvider } from 'naive-ui';
import { vi } from 'vitest';
import type { Role, UnitSystemPref } from '@shared/domain';
import type { ServerFeatures, SessionInfo, SessionUser } from '@shared/schemas/auth';
import TheProviders from '@/components/TheProviders.vue';
import { createAppRouter } from '@/router';
import { useSessionStore } from '@/stores/session';

export interface Call {
  url: string;
  method: string;
  headers: Record<string, string>;
  body: unknown;
  credentials: RequestCredentials | undefined;
}

type Handler = (call: Call) => Response | Promise<Response>;

export function json(status: number, body: unknown, headers: Record<string, string> = {}): Response {
  return new Response(status === 204 ? null : JSON.stringify(body), { status, headers: { 'content-type': 'application/json', ...headers } });
}

export function problem(status: number, p: Record<string, unknown>, headers: Record<string, string> = {}): Response {
  return new Response(JSON.stringify({ status, ...p }), { status, headers: { 'content-type': 'application/problem+json', ...headers } });
}

/** Replaces global fetch; records every call. */
export function stubFetch(handler: Handler) {
  const calls: Call[] = [];
  const fn = vi.fn(async (input: RequestInfo | URL, init?: RequestInit) => {
    const headers: Record<string, string> = {};
    const raw = init?.headers;
    if (raw && !(raw instanceof Headers) && !Array.isArray(raw)) for (const [k, v] of Object.entries(raw)) headers[k.toLowerCase()] = String(v);
    const call: Call = {
      url: String(input),
      method: init?.method ?? 'GET',
      headers,
      body: typeof init?.body === 'string' ? JSON.parse(init.body) : undefined,
      credentials: init?.credentials,
    };
    calls.push(call);
    return handler(call);
  });
  vi.stubGlobal('fetch', fn);
  return { calls, fn };
}

export function makeUser(role: Role, unitSystem: UnitSystemPref = 'imperial'): SessionUser {
  return { id: 7, email: `${role}@example.com`, name: `Test ${role}`, role, customerId: role === 'manager' ? 3 : null, unitSystem };
}

/** Server features for a test: everything off unless asked for. */
export function makeFeatures(f: Partial<ServerFeatures> = {}): ServerFeatures {
  return { demoMode: false, devMailbox: false, ...f };
}

/** A sign-in / `GET /auth/me` answer as the server sends it. */
export function makeSessionInfo(role: Role, opts: { unitSystem?: UnitSystemPref; csrfToken?: string; features?: Partial<ServerFeatures> } = {}): SessionInfo {
  return { user: makeUser(role, opts.unitSystem), csrfToken: opts.csrfToken ?? 'csrf-test-token', features: makeFeatures(opts.features) };
}

export function setup(
  opts: { role?: Role | null; unitSystem?: UnitSystemPref; unknownSession?: boolean; features?: Partial<ServerFeatures> } = {},
): { pinia: Pinia; router: Router } {
  const pinia = createPinia();
  setActivePinia(pinia);
  const session = useSessionStore(pinia);
  if (opts.role) session.apply(makeSessionInfo(opts.role, { unitSystem: opts.unitSystem, features: opts.features }));
  else if (!opts.unknownSession) session.clear();
  const router = createAppRouter(pinia, createMemoryHistory());
  return { pinia, router };
}

/** Mounts a view inside NConfigProvider + TheProviders with pinia and router installed. */
export function mountView(view: Component, ctx: { pinia: Pinia; router: Router }, props: Record<string, unknown> = {}) {
  const Host = defineComponent({ render: () => h(NConfigProvider, null, { default: () => h(TheProviders, null, { default: () => h(view, props) }) }) });
  return mount(Host, { global: { plugins: [ctx.pinia, ctx.router] }, attachTo: document.body });
}

/** Text content of the first element with a data-test attribute. */
export function testText(wrapper: ReturnType<typeof mount>, id: string): string {
  const el = wrapper.find(`[data-test="${id}"]`);
  if (!el.exists()) throw new Error(`no [data-test="${id}"]`);
  return el.text();
}

/** The first number in a text such as "6.5 psig" or "-17.8 °C". */
export function firstNumber(text: string): number {
  const m = /-?\d+(\.\d+)?/.exec(text);
  if (!m) throw new Error(`no number in "${text}"`);
  return Number(m[0]);
}
