import { onScopeDispose, readonly, ref, type Ref } from 'vue';

interface Clock {
  now: Ref<number>;
  users: number;
  timer: ReturnType<typeof setInterval> | null;
}

/** One clock per interval for the whole app: every caller shares its ref and its single timer. */
const clocks = new Map<number, Clock>();

/**
 * A clock ref ticking every `intervalMs` while the calling scope lives. All callers with the same
 * interval share one timer (no per-component timers); it stops when the last of them is disposed.
 */
export function useNow(intervalMs = 1000): Readonly<Ref<number>> {
  let clock = clocks.get(intervalMs);
  if (!clock) {
    clock = { now: ref(Date.now()), users: 0, timer: null };
    clocks.set(intervalMs, clock);
  }
  const c = clock;
  c.users++;
  if (c.timer === null) {
    c.now.value = Date.now();
    c.timer = setInterval(() => {
      c.now.value = Date.now();
    }, intervalMs);
  }
  onScopeDispose(() => {
    c.users--;
    if (c.users <= 0 && c.timer !== null) {
      clearInterval(c.timer);
      c.timer = null;
    }
  });
  return readonly(c.now);
}
