import { defineStore } from 'pinia';
import { computed, ref } from 'vue';
import type { Role, UnitSystemPref } from '@shared/domain';
import type { LoginBody, ServerFeatures, SessionInfo, SessionUser } from '@shared/schemas/auth';
import { authApi } from '@/api/auth';
import { ApiError } from '@/api/http';

export type SessionStatus = 'unknown' | 'loading' | 'ready';

/** Every feature off: the state before sign-in, and what a missing or malformed `features` means. */
export const NO_FEATURES: Readonly<ServerFeatures> = Object.freeze({ demoMode: false, devMailbox: false });

/** Reads the server's features strictly: only a literal `true` turns a feature on. */
export function readFeatures(f: Partial<ServerFeatures> | null | undefined): ServerFeatures {
  return { demoMode: f?.demoMode === true, devMailbox: f?.devMailbox === true, ...(f?.pushInbox === true ? { pushInbox: true } : {}) };
}

/** The signed-in user, the CSRF token, the server's features and role helpers. */
export const useSessionStore = defineStore('session', () => {
  const user = ref<SessionUser | null>(null);
  const csrfToken = ref<string | null>(null);
  /** What the server offers (sent with sign-in and `GET /auth/me`); the UI only hides, the server enforces. */
  const features = ref<ServerFeatures>({ ...NO_FEATURES });
  const status = ref<SessionStatus>('unknown');
  const error = ref<string | null>(null);
  let restoring: Promise<void> | null = null;

  const isSignedIn = computed(() => user.value !== null);
  const role = computed<Role | null>(() => user.value?.role ?? null);
  const isAdmin = computed(() => role.value === 'admin');
  const isTechnician = computed(() => role.value === 'technician');
  const isManager = computed(() => role.value === 'manager');
  /** Technicians and admins send settings to controllers. */
  const canChangeSettings = computed(() => role.value === 'admin' || role.value === 'technician');
  const unitSystem = computed<UnitSystemPref>(() => user.value?.unitSystem ?? 'imperial');
  /** Admins see the dev mailbox only when the server captures mail (SMTP_FAKE). */
  const showDevMailbox = computed(() => isAdmin.value && features.value.devMailbox);
  /** Admins see the push inbox only when the server runs the fake push service (PUSH_FAKE). */
  const showPushInbox = computed(() => isAdmin.value && features.value.pushInbox === true);
  /** Admins may inject simulated faults only when the server runs in demo mode. */
  const canInjectFaults = computed(() => isAdmin.value && features.value.demoMode);

  function hasRole(roles: readonly Role[] | undefined): boolean {
    if (!roles || roles.length === 0) return isSignedIn.value;
    return role.value !== null && roles.includes(role.value);
  }

  function apply(info: SessionInfo) {
    user.value = info.user;
    csrfToken.value = info.csrfToken;
    features.value = readFeatures(info.features);
    status.value = 'ready';
    error.value = null;
  }

  /** Forgets the session locally (after a 401 or sign-out). */
  function clear() {
    user.value = null;
    csrfToken.value = null;
    features.value = { ...NO_FEATURES };
    status.value = 'ready';
  }

  /** Asks the server who we are; a 401 means signed out. Runs once at a time. */
  function restore(): Promise<void> {
    if (restoring) return restoring;
    status.value = 'loading';
    restoring = authApi
      .me()
      .then(apply)
      .catch((e: unknown) => {
        clear();
        if (!(e instanceof ApiError && e.status === 401)) error.value = e instanceof Error ? e.message : String(e);
      })
      .finally(() => {
        restoring = null;
      });
    return restoring;
  }

  async function ensureLoaded(): Promise<void> {
    if (status.value !== 'ready') await restore();
  }

  /** Fetches a fresh CSRF token (after the server rotated it). */
  async function refreshCsrf(): Promise<string | null> {
    if (!user.value) return null;
    const info = await authApi.me();
    apply(info);
    return info.csrfToken;
  }

  async function signIn(body: LoginBody): Promise<SessionUser> {
    const { csrfToken: formToken } = await authApi.csrf();
    const info = await authApi.login(body, formToken);
    apply(info);
    return info.user;
  }

  async function signOut(): Promise<void> {
    try {
      await authApi.logout();
    } catch (e) {
      if (!(e instanceof ApiError && e.status === 401)) throw e;
    } finally {
      clear();
    }
  }

  async function setUnitSystem(unitSystem: UnitSystemPref): Promise<void> {
    if (!user.value) return;
    const before = user.value;
    user.value = { ...before, unitSystem };
    try {
      user.value = await authApi.setPreferences({ unitSystem });
    } catch (e) {
      user.value = before;
      throw e;
    }
  }

  return {
    user,
    csrfToken,
    features,
    status,
    error,
    isSignedIn,
    role,
    isAdmin,
    isTechnician,
    isManager,
    canChangeSettings,
    unitSystem,
    showDevMailbox,
    showPushInbox,
    canInjectFaults,
    hasRole,
    apply,
    clear,
    restore,
    ensureLoaded,
    refreshCsrf,
    signIn,
    signOut,
    setUnitSystem,
  };
});
