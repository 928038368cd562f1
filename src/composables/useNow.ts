import { onScopeDispose, ref, type Ref } from 'vue';

/** A clock ref ticking every `intervalMs` while the calling scope lives. */
export function useNow(intervalMs = 1000): Ref<number> {
  const now = ref(Date.now());
  const t = setInterval(() => {
    now.value = Date.now();
  }, intervalMs);
  onScopeDispose(() => clearInterval(t));
  return now;
}
