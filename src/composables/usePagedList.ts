/** Server-side paginated list with search, for NDataTable's remote mode. */
import { computed, reactive, ref, shallowRef, watch, type Ref } from 'vue';
import type { Page } from '@shared/schemas/common';
import { errorMessage } from '@/api/http';

export interface PageArgs {
  page: number;
  pageSize: number;
  q?: string;
}

export function usePagedList<T>(fetcher: (args: PageArgs) => Promise<Page<T>>, opts: { pageSize?: number; deps?: Ref<unknown>[] } = {}) {
  const items = shallowRef<T[]>([]);
  const total = ref(0);
  const loading = ref(false);
  const error = ref<string | null>(null);
  const q = ref('');
  const state = reactive({ page: 1, pageSize: opts.pageSize ?? 25 });
  let seq = 0;

  async function reload() {
    const my = ++seq;
    loading.value = true;
    try {
      const res = await fetcher({ page: state.page, pageSize: state.pageSize, q: q.value.trim() || undefined });
      if (my !== seq) return;
      items.value = res.items;
      total.value = res.total;
      error.value = null;
      // A deletion can leave us past the last page.
      const last = Math.max(1, Math.ceil(res.total / state.pageSize));
      if (state.page > last) {
        state.page = last;
        await reload();
      }
    } catch (e) {
      if (my === seq) error.value = errorMessage(e);
    } finally {
      if (my === seq) loading.value = false;
    }
  }

  let timer: ReturnType<typeof setTimeout> | null = null;
  watch(q, () => {
    if (timer) clearTimeout(timer);
    timer = setTimeout(() => {
      state.page = 1;
      void reload();
    }, 300);
  });
  if (opts.deps) watch(opts.deps, () => {
    state.page = 1;
    void reload();
  });

  const pagination = computed(() => ({
    page: state.page,
    pageSize: state.pageSize,
    itemCount: total.value,
    showSizePicker: true,
    pageSizes: [10, 25, 50, 100],
    prefix: ({ itemCount }: { itemCount: number | undefined }) => `${itemCount ?? 0} in all`,
    onUpdatePage: (p: number) => {
      state.page = p;
      void reload();
    },
    onUpdatePageSize: (s: number) => {
      state.pageSize = s;
      state.page = 1;
      void reload();
    },
  }));

  return { items, total, loading, error, q, state, reload, pagination };
}
