/** Naive UI message/notification/dialog/loading-bar for code outside components (router, http wiring). */
import { computed } from 'vue';
import { createDiscreteApi, type ConfigProviderProps } from 'naive-ui';
import type { Pinia } from 'pinia';
import { useThemeStore } from '@/stores/theme';

type Discrete = ReturnType<typeof createDiscreteApi<'message' | 'notification' | 'dialog' | 'loadingBar'>>;
let api: Discrete | null = null;

/** Creates the discrete API once, following the theme store. */
export function initDiscrete(pinia: Pinia): Discrete {
  if (api) return api;
  const theme = useThemeStore(pinia);
  const configProviderProps = computed<ConfigProviderProps>(() => ({ theme: theme.naiveTheme, themeOverrides: theme.overrides }));
  api = createDiscreteApi(['message', 'notification', 'dialog', 'loadingBar'], { configProviderProps });
  return api;
}

export function discrete(): Discrete | null {
  return api;
}
