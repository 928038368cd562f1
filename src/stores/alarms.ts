import { defineStore } from 'pinia';
import { computed, readonly, ref, shallowRef } from 'vue';
import type { AlarmDto, AlarmShelveBody } from '@shared/schemas/alarms';
import type { LiveEvent } from '@shared/schemas/live';
import { alarmsApi } from '@/api/alarms';
import { errorMessage } from '@/api/http';
import { useLive, type LiveClient } from '@/composables/useLive';
import { ATTENTION_STATES, PRIORITY_RANK } from '@/lib/alarmText';

/** Group order on the phone list: new first, then still-active acknowledged, then cleared-but-unacknowledged. */
const GROUP_RANK: Record<string, number> = { unacknowledged: 0, acknowledged: 1, 'rtn-unacknowledged': 2 };

/** Sort for the attention list: group, then priority (most urgent first), then newest first. */
export function attentionOrder(a: AlarmDto, b: AlarmDto): number {
  return (
    (GROUP_RANK[a.state] ?? 9) - (GROUP_RANK[b.state] ?? 9) ||
    PRIORITY_RANK[b.priority] - PRIORITY_RANK[a.priority] ||
    Date.parse(b.raisedAt) - Date.parse(a.raisedAt) ||
    b.id - a.id
  );
}

export function needsAttention(a: AlarmDto): boolean {
  return ATTENTION_STATES.includes(a.state);
}

/** Is `b` a newer version of the same alarm than `a`? (A late REST answer must not undo a live event.) */
function isNewer(a: AlarmDto | undefined, b: AlarmDto): boolean {
  if (!a) return true;
  return Date.parse(b.updatedAt) >= Date.parse(a.updatedAt);
}

const ACTIVE_PAGE_SIZE = 200;

/** Alarms keyed by id: the active set from REST, kept current by live `alarm` events and by actions. */
export const useAlarmsStore = defineStore('alarms', () => {
  const byId = shallowRef<Readonly<Record<number, Readonly<AlarmDto>>>>({});
  const loading = ref(false);
  const error = ref<string | null>(null);
  const loadedAt = ref<number | null>(null);
  let inflight: Promise<void> | null = null;
  let liveOff: (() => void) | null = null;

  const attention = computed(() => Object.values(byId.value).filter(needsAttention).sort(attentionOrder));

  /** Attention alarms per box, most urgent first. */
  const byBox = computed(() => {
    const out: Record<number, AlarmDto[]> = {};
    for (const a of attention.value) (out[a.boxId] ??= []).push(a);
    return out;
  });

  function upsert(a: AlarmDto) {
    if (!isNewer(byId.value[a.id], a)) return;
    byId.value = { ...byId.value, [a.id]: a };
  }

  /** Loads the active alarms; cached alarms shown as active but missing from the answer are dropped. */
  function loadActive(): Promise<void> {
    if (inflight) return inflight;
    loading.value = true;
    inflight = alarmsApi
      .list({ active: true, pageSize: ACTIVE_PAGE_SIZE })
      .then((page) => {
        const seen = new Set(page.items.map((a) => a.id));
        const next: Record<number, AlarmDto> = {};
        for (const a of Object.values(byId.value)) if (!needsAttention(a) || seen.has(a.id)) next[a.id] = a;
        for (const a of page.items) if (isNewer(next[a.id], a)) next[a.id] = a;
        byId.value = next;
        loadedAt.value = Date.now();
        error.value = null;
      })
      .catch((e: unknown) => {
        error.value = errorMessage(e);
      })
      .finally(() => {
        loading.value = false;
        inflight = null;
      });
    return inflight;
  }

  /** Loads once per store (badges call this; the list page reloads explicitly). */
  function ensureActive(): Promise<void> {
    if (loadedAt.value !== null || inflight) return inflight ?? Promise.resolve();
    return loadActive();
  }

  /** Applies one live event: `alarm` upserts; `hello` (every new connection) reloads what may have been missed. */
  function applyEvent(ev: LiveEvent) {
    if (ev.type === 'alarm') upsert(ev.alarm);
    else if (ev.type === 'hello') void loadActive();
  }

  /** Subscribes to the app's one live socket (never opens another); idempotent. */
  function connectLive(client: Pick<LiveClient, 'subscribe'> = useLive()) {
    if (liveOff) return;
    liveOff = client.subscribe(applyEvent);
  }

  /**
   * For badges: follow the live socket and load the active set once it is open (its `hello`
   * triggers the load when it opens later). Nothing is fetched while the app has no socket.
   */
  function follow(client: Pick<LiveClient, 'subscribe' | 'status'> = useLive()) {
    connectLive(client);
    if (client.status.value === 'open') void ensureActive();
  }

  function disconnectLive() {
    liveOff?.();
    liveOff = null;
  }

  async function acknowledge(id: number, note?: string): Promise<AlarmDto> {
    const a = await alarmsApi.ack(id, note ? { note } : {});
    upsert(a);
    return a;
  }

  async function shelve(id: number, body: AlarmShelveBody): Promise<AlarmDto> {
    const a = await alarmsApi.shelve(id, body);
    upsert(a);
    return a;
  }

  async function unshelve(id: number): Promise<AlarmDto> {
    const a = await alarmsApi.unshelve(id);
    upsert(a);
    return a;
  }

  async function acknowledgeByLink(token: string): Promise<AlarmDto> {
    const a = await alarmsApi.ackLink(token);
    upsert(a);
    return a;
  }

  function reset() {
    byId.value = {};
    loadedAt.value = null;
    error.value = null;
  }

  return {
    byId: readonly(byId),
    attention,
    byBox,
    loading,
    error,
    loadedAt,
    upsert,
    loadActive,
    ensureActive,
    applyEvent,
    connectLive,
    follow,
    disconnectLive,
    acknowledge,
    shelve,
    unshelve,
    acknowledgeByLink,
    reset,
  };
});
