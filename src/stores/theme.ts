import { defineStore } from 'pinia';
import { computed, ref, watch } from 'vue';
import { darkTheme, type GlobalTheme } from 'naive-ui';
import { darkOverrides, lightOverrides, themeColor } from '@/theme/palette';

export type ThemeMode = 'light' | 'dark';
const STORAGE_KEY = 'rimehold.theme';

function initialMode(): ThemeMode {
  try {
    const saved = localStorage.getItem(STORAGE_KEY);
    if (saved === 'light' || saved === 'dark') return saved;
  } catch {
    /* storage unavailable */
  }
  return typeof matchMedia === 'function' && matchMedia('(prefers-color-scheme: dark)').matches ? 'dark' : 'light';
}

/** Light/dark theme for the one NConfigProvider (and the discrete API). */
export const useThemeStore = defineStore('theme', () => {
  const mode = ref<ThemeMode>(initialMode());
  const isDark = computed(() => mode.value === 'dark');
  const naiveTheme = computed<GlobalTheme | null>(() => (isDark.value ? darkTheme : null));
  const overrides = computed(() => (isDark.value ? darkOverrides : lightOverrides));

  function setMode(m: ThemeMode) {
    mode.value = m;
  }
  function toggle() {
    mode.value = isDark.value ? 'light' : 'dark';
  }

  watch(
    mode,
    (m) => {
      try {
        localStorage.setItem(STORAGE_KEY, m);
      } catch {
        /* ignore */
      }
      if (typeof document !== 'undefined') {
        document.documentElement.dataset.theme = m;
        document.querySelector('meta[name="theme-color"]')?.setAttribute('content', themeColor[m]);
      }
    },
    { immediate: true },
  );

  return { mode, isDark, naiveTheme, overrides, setMode, toggle };
});
