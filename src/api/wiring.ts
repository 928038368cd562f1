/** Connects the http wrapper to the session store and the router (401 → sign-in with a redirect back). */
import type { Pinia } from 'pinia';
import type { Router } from 'vue-router';
import { useSessionStore } from '@/stores/session';
import { useFleetStore } from '@/stores/fleet';
import { configureHttp } from './http';

export interface WiringHooks {
  /** Shown once when a session ends underneath the user. */
  notify?: (text: string) => void;
}

export function installHttpWiring(router: Router, pinia: Pinia, hooks: WiringHooks = {}): void {
  const session = useSessionStore(pinia);
  let redirecting = false;
  configureHttp({
    getCsrfToken: () => session.csrfToken,
    refreshCsrf: () => session.refreshCsrf(),
    onUnauthorized: () => {
      const wasSignedIn = session.isSignedIn;
      session.clear();
      useFleetStore(pinia).reset();
      const current = router.currentRoute.value;
      if (redirecting || current.name === 'sign-in') return;
      redirecting = true;
      if (wasSignedIn) hooks.notify?.('Your session has ended. Please sign in again.');
      const redirect = current.fullPath && current.fullPath !== '/' ? current.fullPath : undefined;
      void router.replace({ name: 'sign-in', query: redirect ? { redirect } : {} }).finally(() => {
        redirecting = false;
      });
    },
  });
}
