import { onScopeDispose, ref, type Ref } from 'vue';

/** True below 768 px width (phones; 390×844 is the reference size). */
export function useIsPhone(query = '(max-width: 767px)'): Ref<boolean> {
  const mq = typeof window !== 'undefined' && typeof window.matchMedia === 'function' ? window.matchMedia(query) : null;
  const phone = ref(mq ? mq.matches : false);
  if (mq) {
    const on = (e: MediaQueryListEvent) => {
      phone.value = e.matches;
    };
    mq.addEventListener('change', on);
    onScopeDispose(() => mq.removeEventListener('change', on));
  }
  return phone;
}
