import { createRouter, createWebHistory, type RouteLocationNormalized, type RouteLocationRaw, type RouterHistory } from 'vue-router';
import type { Pinia } from 'pinia';
import { useSessionStore } from '@/stores/session';
import { routes } from './routes';

type SessionLike = Pick<ReturnType<typeof useSessionStore>, 'ensureLoaded' | 'isSignedIn' | 'hasRole'>;

/** Only same-app paths are accepted as a redirect target (no open redirect). */
export function safeRedirect(v: unknown): string | null {
  const s = Array.isArray(v) ? v[0] : v;
  if (typeof s !== 'string' || !s.startsWith('/') || s.startsWith('//') || s.startsWith('/\\')) return null;
  return s;
}

/** The navigation guard: sign-in for private routes, role check from `meta.roles`. */
export async function authGuard(to: Pick<RouteLocationNormalized, 'matched' | 'meta' | 'query' | 'fullPath'>, session: SessionLike): Promise<true | RouteLocationRaw> {
  await session.ensureLoaded();
  // meta merges parent → child; every record's roles must allow the user.
  const isPublic = to.matched.some((r) => r.meta.public);
  if (isPublic) {
    if (to.meta.guestOnly && session.isSignedIn) return safeRedirect(to.query.redirect) ?? { name: 'fleet' };
    return true;
  }
  if (!session.isSignedIn) return { name: 'sign-in', query: to.fullPath !== '/' ? { redirect: to.fullPath } : {} };
  for (const r of to.matched) {
    if (r.meta.roles && !session.hasRole(r.meta.roles)) return { name: 'forbidden', query: { from: to.fullPath } };
  }
  return true;
}

export function createAppRouter(pinia: Pinia, history: RouterHistory = createWebHistory()) {
  const router = createRouter({
    history,
    routes,
    scrollBehavior: (_to, _from, saved) => saved ?? { top: 0 },
  });
  router.beforeEach((to) => authGuard(to, useSessionStore(pinia)));
  router.afterEach((to) => {
    if (typeof document !== 'undefined') document.title = to.meta.title ? `${to.meta.title} · Rimehold` : 'Rimehold';
  });
  return router;
}
