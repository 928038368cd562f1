/**
 * Windowing for a grid of fixed-height items in a page that scrolls as a whole (the window):
 * only the rows in view (plus a few above and below) are rendered; a spacer keeps the full height
 * so the scrollbar and keyboard scrolling behave as for the whole list. Columns follow the width
 * (one column below `phoneMaxPx`). Scroll and resize are read at most once per animation frame.
 */
import { computed, onBeforeUnmount, onMounted, ref, watch, type Ref } from 'vue';

export interface VirtualGridOptions {
  count: Ref<number>;
  rowHeightPx: number;
  gapPx: number;
  minColumnPx: number;
  /** Widths below this get one column (the phone layout). */
  phoneMaxPx?: number;
  overscanRows?: number;
}

export interface GridWindow {
  columns: number;
  /** Index of the first rendered item and one past the last. */
  start: number;
  end: number;
  /** Offset of the first rendered row from the top of the grid, px. */
  offsetPx: number;
  totalPx: number;
}

/** The items to render for a grid `widthPx` wide whose top is `topPx` from the viewport top (negative when scrolled past). */
export function gridWindow(count: number, widthPx: number, topPx: number, viewportPx: number, o: Omit<VirtualGridOptions, 'count'>): GridWindow {
  const phoneMax = o.phoneMaxPx ?? 0;
  const columns = widthPx <= 0 || widthPx < phoneMax ? 1 : Math.max(1, Math.floor((widthPx + o.gapPx) / (o.minColumnPx + o.gapPx)));
  const pitch = o.rowHeightPx + o.gapPx;
  const rows = Math.ceil(count / columns);
  const totalPx = Math.max(0, rows * pitch - o.gapPx);
  const overscan = o.overscanRows ?? 2;
  const seenFrom = Math.max(0, -topPx);
  const seenTo = Math.max(0, viewportPx - topPx);
  const firstRow = Math.max(0, Math.floor(seenFrom / pitch) - overscan);
  const lastRow = Math.min(rows, Math.ceil(seenTo / pitch) + overscan);
  const start = Math.min(count, firstRow * columns);
  const end = Math.min(count, Math.max(start, lastRow * columns));
  return { columns, start, end, offsetPx: firstRow * pitch, totalPx };
}

/** A reactive window over `count` items for the element bound to `el`. */
export function useVirtualGrid(opts: VirtualGridOptions) {
  const el = ref<HTMLElement | null>(null);
  const widthPx = ref(0);
  const topPx = ref(0);
  const viewportPx = ref(typeof window === 'undefined' ? 800 : window.innerHeight);
  let frame = 0;
  let observer: ResizeObserver | null = null;

  function measure() {
    frame = 0;
    const node = el.value;
    if (!node) return;
    const rect = node.getBoundingClientRect();
    widthPx.value = rect.width;
    topPx.value = rect.top;
    viewportPx.value = window.innerHeight;
  }

  function request() {
    if (frame === 0 && typeof requestAnimationFrame === 'function') frame = requestAnimationFrame(measure);
    else if (typeof requestAnimationFrame !== 'function') measure();
  }

  onMounted(() => {
    measure();
    window.addEventListener('scroll', request, { passive: true });
    window.addEventListener('resize', request, { passive: true });
    if (typeof ResizeObserver === 'function' && el.value) {
      observer = new ResizeObserver(request);
      observer.observe(el.value);
    }
  });
  onBeforeUnmount(() => {
    window.removeEventListener('scroll', request);
    window.removeEventListener('resize', request);
    observer?.disconnect();
    if (frame !== 0 && typeof cancelAnimationFrame === 'function') cancelAnimationFrame(frame);
  });
  // The element moves when content above it (filters, alerts) changes height with the count.
  watch(opts.count, request, { flush: 'post' });

  const win = computed(() => gridWindow(opts.count.value, widthPx.value, topPx.value, viewportPx.value, opts));
  return { el, win, measure };
}
