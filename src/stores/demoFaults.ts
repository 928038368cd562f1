import { defineStore } from 'pinia';
import { readonly, ref, watch } from 'vue';
import { z } from 'zod';
import { FAULT_NAMES, THERMISTOR_NAMES, type DemoFaultBody, type FaultName, type ThermistorName } from '@shared/schemas/demo';
import { demoApi } from '@/api/demo';

/** A fault this tab switched on: when, and for sensor faults which thermistor. */
export interface SwitchedFault {
  sensor?: ThermistorName;
  /** ISO 8601 time the server accepted the command. */
  at: string;
}

export type BoxFaults = Partial<Record<FaultName, SwitchedFault>>;

/** Where the marks survive a reload of this tab (sessionStorage: gone when the tab closes). */
export const DEMO_FAULTS_STORAGE_KEY = 'rimehold.demoFaults.v1';

const Stored = z.record(
  z.string().regex(/^\d+$/),
  z.partialRecord(z.enum(FAULT_NAMES), z.object({ sensor: z.enum(THERMISTOR_NAMES).optional(), at: z.string().max(40) })),
);

function storage(): Storage | null {
  try {
    return typeof sessionStorage === 'undefined' ? null : sessionStorage;
  } catch {
    return null;
  }
}

function readStored(): Record<number, BoxFaults> {
  const raw = storage()?.getItem(DEMO_FAULTS_STORAGE_KEY);
  if (!raw) return {};
  try {
    const parsed = Stored.safeParse(JSON.parse(raw));
    return parsed.success ? parsed.data : {};
  } catch {
    return {};
  }
}

/**
 * Simulated faults switched on from this tab, keyed by box id. The server does not report which
 * faults are active, so this is only what this tab sent, kept for the life of the tab.
 */
export const useDemoFaultsStore = defineStore('demoFaults', () => {
  const byBox = ref<Record<number, BoxFaults>>(readStored());
  /** `${boxId}:${fault}` of requests in flight. */
  const pending = ref<Record<string, true>>({});

  watch(byBox, (v) => {
    try {
      storage()?.setItem(DEMO_FAULTS_STORAGE_KEY, JSON.stringify(v));
    } catch {
      /* storage full or blocked: the marks still live in memory */
    }
  });

  function forBox(boxId: number): Readonly<BoxFaults> {
    return byBox.value[boxId] ?? {};
  }

  function isPending(boxId: number, fault: FaultName): boolean {
    return pending.value[`${boxId}:${fault}`] === true;
  }

  /** Sends the switch; the mark changes only once the server accepted it. Rejects with the ApiError. */
  async function setFault(body: DemoFaultBody): Promise<void> {
    const key = `${body.boxId}:${body.fault}`;
    if (pending.value[key]) return;
    pending.value = { ...pending.value, [key]: true };
    try {
      await demoApi.setFault(body);
      const cur: BoxFaults = { ...(byBox.value[body.boxId] ?? {}) };
      if (body.on) cur[body.fault] = { ...(body.sensor ? { sensor: body.sensor } : {}), at: new Date().toISOString() };
      else delete cur[body.fault];
      byBox.value = { ...byBox.value, [body.boxId]: cur };
    } finally {
      const next = { ...pending.value };
      delete next[key];
      pending.value = next;
    }
  }

  return { byBox: readonly(byBox), forBox, isPending, setFault };
});
