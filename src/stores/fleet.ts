import { defineStore } from 'pinia';
import { computed, readonly, ref, shallowRef } from 'vue';
import type { FleetBoxStatus, LiveEvent, ReadingDto } from '@shared/schemas/live';
import type { SettingsChangeDto } from '@shared/schemas/settings';
import { fleetApi } from '@/api/fleet';
import { errorMessage } from '@/api/http';

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

/** Is reading `b` newer than `a`? Sequence numbers restart when a controller reboots, so time decides first. */
function newer(a: ReadingDto | null, b: ReadingDto): boolean {
  if (!a) return true;
  const ta = Date.parse(a.ts);
  const tb = Date.parse(b.ts);
  if (tb !== ta) return tb > ta;
  return b.seq > a.seq;
}

/** Fleet status keyed by box id, loaded from REST and kept current by WebSocket events. */
export const useFleetStore = defineStore('fleet', () => {
  const byId = shallowRef<Readonly<Record<number, Readonly<FleetBoxStatus>>>>({});
  const loading = ref(false);
  const error = ref<string | null>(null);
  const loadedAt = ref<number | null>(null);
  let inflight: Promise<void> | null = null;

  const list = computed(() => Object.values(byId.value));

  const groups = computed<CustomerGroup[]>(() => {
    const customers = new Map<number, CustomerGroup>();
    const sorted = [...list.value].sort(
      (a, b) =>
        a.customerName.localeCompare(b.customerName) || a.siteName.localeCompare(b.siteName) || a.boxName.localeCompare(b.boxName, undefined, { numeric: true }),
    );
    for (const box of sorted) {
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

  function replaceAll(rows: FleetBoxStatus[]) {
    const next: Record<number, FleetBoxStatus> = {};
    for (const r of rows) next[r.boxId] = r;
    byId.value = next;
    loadedAt.value = Date.now();
  }

  function patch(boxId: number, fn: (b: Readonly<FleetBoxStatus>) => FleetBoxStatus | null) {
    const cur = byId.value[boxId];
    if (!cur) return;
    const upd = fn(cur);
    if (upd && upd !== cur) byId.value = { ...byId.value, [boxId]: upd };
  }

  /** Loads (or reloads, e.g. after a reconnect) the whole fleet. */
  function load(): Promise<void> {
    if (inflight) return inflight;
    loading.value = true;
    inflight = fleetApi
      .status()
      .then((rows) => {
        replaceAll(rows);
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

  function reset() {
    byId.value = {};
    loadedAt.value = null;
    error.value = null;
  }

  return { byId: readonly(byId), list, groups, loading, error, loadedAt, load, applyEvent, setMaintenance, replaceAll, reset };
});
