/** Server-side paginated list with search, for NDataTable's remote mode. */
import { computed, reactive, ref, shallowRef, watch, type Ref } from 'vue';
import type { Page } from '@shared/schemas/common';
import { errorMessage } from '@/api/http';

export interface PageArgs {
  page: number;
  pageSize: number;
  q?: string;
  /** A sort name the endpoint whitelists, sent only once a column header was clicked. */
  sort?: string;
  order?: SortOrder;
}

export type SortOrder = 'asc' | 'desc';

/** The sort state in NDataTable's terms (`ascend` / `descend` / false). */
export interface TableSorter {
  columnKey: string | number;
  order: 'ascend' | 'descend' | false;
}

export function usePagedList<T>(fetcher: (args: PageArgs) => Promise<Page<T>>, opts: { pageSize?: number; deps?: Ref<unknown>[] } = {}) {
  const items = shallowRef<T[]>([]);
  const total = ref(0);
  const loading = ref(false);
  const error = ref<string | null>(null);
  const q = ref('');
  const state = reactive({ page: 1, pageSize: opts.pageSize ?? 25 });
  const sort = ref<{ key: string; order: SortOrder } | null>(null);
  let seq = 0;

  async function reload() {
    const my = ++seq;
    loading.value = true;
    try {
      const args: PageArgs = { page: state.page, pageSize: state.pageSize, q: q.value.trim() || undefined };
      if (sort.value) Object.assign(args, { sort: sort.value.key, order: sort.value.order });
      const res = await fetcher(args);
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

  /** Sorts by a column (null: the endpoint's default order) and goes back to the first page. */
  function setSort(key: string | null, order: SortOrder = 'asc') {
    sort.value = key ? { key, order } : null;
    state.page = 1;
    void reload();
  }
  /** NDataTable's `update:sorter` handler. */
  function onSorter(s: TableSorter | null) {
    if (!s || s.order === false) setSort(null);
    else setSort(String(s.columnKey), s.order === 'descend' ? 'desc' : 'asc');
  }
  /** The column's sort order for NDataTable's controlled `sortOrder`. */
  function sortOrderOf(key: string): 'ascend' | 'descend' | false {
    return sort.value?.key === key ? (sort.value.order === 'desc' ? 'descend' : 'ascend') : false;
  }

  return { items, total, loading, error, q, state, sort, reload, pagination, setSort, onSorter, sortOrderOf };
}

/** What a list page holds: the state and actions of usePagedList. */
export type PagedList<T> = ReturnType<typeof usePagedList<T>>;
