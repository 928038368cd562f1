/**
 * Fleet status keyed by box id, loaded from REST and kept current by WebSocket events, built to
 * carry thousands of boxes with hundreds of readings a second:
 * - boxes live in a plain (non-reactive) Map; each event replaces the box's object there at once,
 *   so a read right after `applyEvent` sees it;
 * - what the screen depends on is a version counter per box plus one for the order; changed boxes
 *   are collected in a Set (bounded by the fleet size) and their counters bumped once per
 *   animation frame, so 200 readings a second cost one render per changed, visible card per frame;
 * - each box's fleet state, sort rank and lowercase search text are derived when it changes (and on
 *   the shared low-frequency clock), never per render.
 * Nothing is appended per reading: memory is proportional to the number of boxes.
 */
import { defineStore } from 'pinia';
import { computed, markRaw, ref, shallowRef, watch, type Ref } from 'vue';
import type { AlarmPriority } from '@shared/alarms/types';
import type { FleetBoxStatus, LiveEvent, ReadingDto } from '@shared/schemas/live';
import type { SettingsChangeDto } from '@shared/schemas/settings';
import { fleetApi } from '@/api/fleet';
import { errorMessage } from '@/api/http';
import { useAlarmsStore } from '@/stores/alarms';
import { PRIORITY_RANK } from '@/lib/alarmText';
import { FLEET_STATE_ORDER, TROUBLE_STATES, fleetRank, fleetState, offlineReason, type FleetState } from '@/lib/boxStatus';

export interface SiteGroup {
  siteId: number;
  siteName: string;
  boxes: FleetBoxStatus[];
}
export interface CustomerGroup {
  customerId: number;
  customerName: string;
  sites: SiteGroup[];
}

/** Derived, per-box facts the fleet page sorts, counts and filters by. */
export interface FleetRow {
  box: Readonly<FleetBoxStatus>;
  state: FleetState;
  alarmPriority: AlarmPriority | null;
  alarmCount: number;
  /** Why the box counts as offline, in words (null when it does not). */
  offline: string | null;
  rank: number;
  /** Position in customer → site → box name order (fixed between loads). */
  nameOrder: number;
  /** Lowercase box, site, customer, refrigerant and controller serial, for search. */
  search: string;
}

export interface FleetFilter {
  text?: string;
  customerId?: number | null;
  siteId?: number | null;
  kind?: FleetBoxStatus['kind'] | null;
  state?: FleetState | null;
}

export interface SiteCount {
  siteId: number;
  siteName: string;
  customerId: number;
  customerName: string;
  total: number;
  trouble: number;
  byState: Record<FleetState, number>;
}

/** Schedules `fn` before the next paint (requestAnimationFrame; a 16 ms timer where there is none). */
export type FrameScheduler = (fn: () => void) => void;
const defaultScheduler: FrameScheduler = (fn) => {
  if (typeof requestAnimationFrame === 'function') requestAnimationFrame(() => fn());
  else setTimeout(fn, 16);
};

/** Is reading `b` newer than `a`? Sequence numbers restart when a controller reboots, so time decides first. */
function newer(a: ReadingDto | null, b: ReadingDto): boolean {
  if (!a) return true;
  const ta = Date.parse(a.ts);
  const tb = Date.parse(b.ts);
  if (tb !== ta) return tb > ta;
  return b.seq > a.seq;
}

function searchText(b: FleetBoxStatus): string {
  return `${b.boxName}\u0001${b.siteName}\u0001${b.customerName}\u0001${b.refrigerant}\u0001${b.controllerSerial ?? ''}`.toLowerCase();
}

function emptyCounts(): Record<FleetState, number> {
  return Object.fromEntries(FLEET_STATE_ORDER.map((s) => [s, 0])) as Record<FleetState, number>;
}

export const useFleetStore = defineStore('fleet', () => {
  const alarms = useAlarmsStore();
  const rows = markRaw(new Map<number, FleetRow>());
  const versions = markRaw(new Map<number, Ref<number>>());
  /** Bumped when the set of boxes or their names change. */
  const structureVersion = ref(0);
  /** Bumped when any box's state or rank changed (the page re-sorts and re-counts). */
  const orderVersion = ref(0);
  const loading = ref(false);
  const error = ref<string | null>(null);
  const loadedAt = ref<number | null>(null);
  let inflight: Promise<void> | null = null;
  let scheduler: FrameScheduler = defaultScheduler;
  let clock: () => number = () => Date.now();
  const pending = new Set<number>();
  let framePending = false;
  let orderDirty = false;
  /** Most urgent active alarm priority and count per box (from the alarms store). */
  let alarmByBox = new Map<number, { priority: AlarmPriority; count: number }>();

  function derive(box: Readonly<FleetBoxStatus>, nameOrder: number, nowMs: number): FleetRow {
    const a = alarmByBox.get(box.boxId) ?? null;
    const state = fleetState(box, a?.priority ?? null, nowMs);
    const priority = a?.priority ?? null;
    return { box, state, alarmPriority: priority, alarmCount: a?.count ?? 0, offline: offlineReason(box, nowMs), rank: fleetRank(state, priority), nameOrder, search: searchText(box) };
  }

  function flush() {
    framePending = false;
    for (const id of pending) {
      const v = versions.get(id);
      if (v) v.value += 1;
    }
    pending.clear();
    if (orderDirty) {
      orderDirty = false;
      orderVersion.value += 1;
    }
  }

  function markChanged(id: number) {
    pending.add(id);
    if (!framePending) {
      framePending = true;
      scheduler(flush);
    }
  }

  /** Re-derives one box (after its data, its alarms or the clock changed); marks it for the next frame. */
  function update(id: number, box: Readonly<FleetBoxStatus>, nowMs = clock()) {
    const cur = rows.get(id);
    if (!cur) return;
    const next = derive(box, cur.nameOrder, nowMs);
    const same = next.box === cur.box && next.state === cur.state && next.alarmPriority === cur.alarmPriority && next.alarmCount === cur.alarmCount && next.offline === cur.offline;
    if (same) return;
    rows.set(id, next);
    if (next.rank !== cur.rank || next.state !== cur.state || next.search !== cur.search) orderDirty = true;
    markChanged(id);
  }

  function patch(boxId: number, fn: (b: Readonly<FleetBoxStatus>) => FleetBoxStatus | null) {
    const cur = rows.get(boxId);
    if (!cur) return;
    const upd = fn(cur.box);
    if (upd && upd !== cur.box) update(boxId, upd);
  }

  function replaceAll(list: FleetBoxStatus[]) {
    const sorted = [...list].sort(
      (a, b) =>
        a.customerName.localeCompare(b.customerName) || a.siteName.localeCompare(b.siteName) || a.boxName.localeCompare(b.boxName, undefined, { numeric: true }),
    );
    const nowMs = clock();
    const seen = new Set<number>();
    sorted.forEach((box, i) => {
      seen.add(box.boxId);
      rows.set(box.boxId, derive(box, i, nowMs));
      if (versions.has(box.boxId)) markChanged(box.boxId);
      else versions.set(box.boxId, ref(0));
    });
    for (const id of [...rows.keys()]) {
      if (!seen.has(id)) {
        rows.delete(id);
        versions.delete(id);
        pending.delete(id);
      }
    }
    structureVersion.value += 1;
    orderVersion.value += 1;
    loadedAt.value = Date.now();
  }

  /** The box's row, tracked by its version (a card re-renders only when its own box changed). */
  function row(id: number): FleetRow | undefined {
    const v = versions.get(id);
    if (v) void v.value;
    else void structureVersion.value;
    return rows.get(id);
  }

  /**
   * Boxes by id for other screens (`fleet.byId[id]` in a computed tracks that box only). Reads see
   * the latest event at once; dependants are told once per frame.
   */
  const byIdTarget = markRaw({} as Record<number, Readonly<FleetBoxStatus>>);
  const byId = new Proxy(byIdTarget, {
    get(target, key) {
      if (typeof key !== 'string' || !/^\d+$/.test(key)) return Reflect.get(target, key);
      return row(Number(key))?.box;
    },
    has(target, key) {
      if (typeof key !== 'string' || !/^\d+$/.test(key)) return Reflect.has(target, key);
      void structureVersion.value;
      return rows.has(Number(key));
    },
    ownKeys() {
      void structureVersion.value;
      return [...rows.keys()].map(String);
    },
    getOwnPropertyDescriptor(target, key) {
      if (typeof key === 'string' && /^\d+$/.test(key) && rows.has(Number(key))) return { configurable: true, enumerable: true, writable: false, value: rows.get(Number(key))?.box };
      return Reflect.getOwnPropertyDescriptor(target, key);
    },
    set() {
      return false;
    },
  }) as Readonly<Record<number, Readonly<FleetBoxStatus>>>;

  /** Every box, in customer → site → box name order; changes with the set of boxes (not per reading). */
  const list = computed(() => {
    void structureVersion.value;
    return [...rows.values()].sort((a, b) => a.nameOrder - b.nameOrder).map((r) => r.box);
  });

  const groups = computed<CustomerGroup[]>(() => {
    const customers = new Map<number, CustomerGroup>();
    for (const box of list.value) {
      let c = customers.get(box.customerId);
      if (!c) {
        c = { customerId: box.customerId, customerName: box.customerName, sites: [] };
        customers.set(box.customerId, c);
      }
      let s = c.sites.find((x) => x.siteId === box.siteId);
      if (!s) {
        s = { siteId: box.siteId, siteName: box.siteName, boxes: [] };
        c.sites.push(s);
      }
      s.boxes.push(box);
    }
    return [...customers.values()];
  });

  /** All rows, trouble first (by rank, then name order); re-sorted only when an order-relevant fact changed. */
  const ordered = computed<FleetRow[]>(() => {
    void orderVersion.value;
    void structureVersion.value;
    return [...rows.values()].sort((a, b) => a.rank - b.rank || a.nameOrder - b.nameOrder);
  });

  /** Boxes per state over the whole fleet. */
  const stateCounts = computed(() => {
    const c = emptyCounts();
    for (const r of ordered.value) c[r.state] += 1;
    return c;
  });

  /** Boxes per site, with the count per state and in trouble. */
  const siteCounts = computed<SiteCount[]>(() => {
    const m = new Map<number, SiteCount>();
    for (const r of ordered.value) {
      let s = m.get(r.box.siteId);
      if (!s) {
        s = { siteId: r.box.siteId, siteName: r.box.siteName, customerId: r.box.customerId, customerName: r.box.customerName, total: 0, trouble: 0, byState: emptyCounts() };
        m.set(r.box.siteId, s);
      }
      s.total += 1;
      s.byState[r.state] += 1;
      if (TROUBLE_STATES.includes(r.state)) s.trouble += 1;
    }
    return [...m.values()].sort((a, b) => a.customerName.localeCompare(b.customerName) || a.siteName.localeCompare(b.siteName));
  });

  /** Box ids matching the filter, trouble first. Text matches every word against the precomputed index. */
  function select(f: FleetFilter): number[] {
    const words = (f.text ?? '').trim().toLowerCase().split(/\s+/).filter(Boolean);
    const out: number[] = [];
    for (const r of ordered.value) {
      if (f.customerId != null && r.box.customerId !== f.customerId) continue;
      if (f.siteId != null && r.box.siteId !== f.siteId) continue;
      if (f.kind != null && r.box.kind !== f.kind) continue;
      if (f.state != null && r.state !== f.state) continue;
      if (words.length > 0 && !words.every((w) => r.search.includes(w))) continue;
      out.push(r.box.boxId);
    }
    return out;
  }

  /** Re-derives every box against the clock (stale readings, ended maintenance); call at low frequency. */
  function tick(nowMs: number = clock()) {
    for (const [id, r] of rows) update(id, r.box, nowMs);
  }

  watch(
    () => alarms.byBox,
    (byBox) => {
      const next = new Map<number, { priority: AlarmPriority; count: number }>();
      for (const [id, list] of Object.entries(byBox)) {
        if (!list || list.length === 0) continue;
        const top = list.reduce<AlarmPriority>((p, a) => (PRIORITY_RANK[a.priority] > PRIORITY_RANK[p] ? a.priority : p), list[0]?.priority ?? 'low');
        next.set(Number(id), { priority: top, count: list.length });
      }
      const touched = new Set<number>([...alarmByBox.keys(), ...next.keys()]);
      alarmByBox = next;
      for (const id of touched) {
        const r = rows.get(id);
        if (r) update(id, r.box);
      }
    },
    { immediate: true },
  );

  /** Loads (or reloads, e.g. after a reconnect) the whole fleet. */
  function load(): Promise<void> {
    if (inflight) return inflight;
    loading.value = true;
    inflight = fleetApi
      .status()
      .then((list) => {
        replaceAll(list);
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

  function applySettings(change: SettingsChangeDto) {
    if (change.state !== 'applied' || !change.applied) return;
    const a = change.applied;
    patch(change.boxId, (b) => ({
      ...b,
      setpointC: typeof a.setpointC === 'number' ? a.setpointC : b.setpointC,
      superheatTargetK: typeof a.superheatTargetK === 'number' ? a.superheatTargetK : b.superheatTargetK,
      refrigerant: typeof a.refrigerant === 'string' ? a.refrigerant : b.refrigerant,
    }));
  }

  /** Records a box's maintenance window end (ISO) or its end (null). */
  function setMaintenance(boxId: number, until: string | null) {
    patch(boxId, (b) => (b.maintenanceUntil === until ? b : { ...b, maintenanceUntil: until }));
  }

  /** Applies one live event; unknown boxes are ignored (a resync brings new boxes). */
  function applyEvent(ev: LiveEvent) {
    switch (ev.type) {
      case 'reading':
        patch(ev.boxId, (b) => (newer(b.latest, ev.reading) ? { ...b, latest: ev.reading, online: true, lastSeenAt: ev.reading.ts } : b));
        break;
      case 'controller':
        patch(ev.boxId, (b) => ({ ...b, online: ev.online, controllerSerial: ev.serial, lastSeenAt: ev.at }));
        break;
      case 'settings':
        applySettings(ev.change);
        break;
      case 'maintenance':
        setMaintenance(ev.boxId, ev.until);
        break;
      default:
        break;
    }
  }

  /** For tests and benches: how frames are scheduled, and the clock states are derived against. */
  function configure(opts: { scheduler?: FrameScheduler; clock?: () => number }) {
    if (opts.scheduler) scheduler = opts.scheduler;
    if (opts.clock) clock = opts.clock;
  }

  function reset() {
    rows.clear();
    versions.clear();
    pending.clear();
    structureVersion.value += 1;
    orderVersion.value += 1;
    loadedAt.value = null;
    error.value = null;
  }

  const size = computed(() => {
    void structureVersion.value;
    return rows.size;
  });

  return {
    byId: shallowRef(byId),
    list,
    groups,
    ordered,
    stateCounts,
    siteCounts,
    size,
    loading,
    error,
    loadedAt,
    row,
    select,
    tick,
    flush,
    configure,
    load,
    applyEvent,
    setMaintenance,
    replaceAll,
    reset,
  };
});
