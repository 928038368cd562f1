/** Safe wrappers around the refrigerant engine for screens: a value or a readable error, never NaN. */
import {
  getRefrigerant,
  isRefrigerantId,
  listRefrigerants,
  RefrigerantRangeError,
  UnknownRefrigerantError,
  type RefrigerantId,
  type RefrigerantInfo,
} from '@shared/refrigerants';
import { formatPressureGauge, formatTemperature, absoluteToGaugeKPa, atmosphericPressureKPa, type UnitSystem } from '@shared/field';

export type Outcome<T> = { ok: true; value: T } | { ok: false; message: string };

/** Runs fn; engine and parse errors become a message, and a non-finite result is refused. */
export function attempt<T>(fn: () => T, describe?: (e: unknown) => string | null): Outcome<T> {
  try {
    const value = fn();
    if (typeof value === 'number' && !Number.isFinite(value)) return { ok: false, message: 'The result is not a finite number; check the inputs.' };
    return { ok: true, value };
  } catch (e) {
    const custom = describe?.(e);
    if (custom) return { ok: false, message: custom };
    if (e instanceof RefrigerantRangeError || e instanceof UnknownRefrigerantError || e instanceof RangeError || e instanceof TypeError) {
      return { ok: false, message: e.message };
    }
    return { ok: false, message: e instanceof Error ? e.message : String(e) };
  }
}

/** Range error in the user's units, followed by the engine's own message. */
export function describeRangeError(e: unknown, system: UnitSystem, elevationM: number): string | null {
  if (!(e instanceof RefrigerantRangeError)) return null;
  let range: string;
  if (e.quantity === 'temperatureC') {
    range = `${formatTemperature(e.min, system)} to ${formatTemperature(e.max, system)}`;
  } else {
    let atm = 101.325;
    try {
      atm = atmosphericPressureKPa(elevationM);
    } catch {
      /* keep sea level */
    }
    range = `${formatPressureGauge(e.min - atm, system)} to ${formatPressureGauge(e.max - atm, system)}`;
  }
  return `Outside the range Rimehold has data for (${range} on the ${e.curve} curve). ${e.message}.`;
}

export function gaugeFromAbs(kPaAbs: number, elevationM: number): number {
  return absoluteToGaugeKPa(kPaAbs, elevationM);
}

export function refrigerantOptions(): { label: string; value: RefrigerantId; info: RefrigerantInfo }[] {
  return listRefrigerants().map((r) => ({ label: `${r.id} · ${r.safetyClass}${r.glideK >= 1 ? ' · glide' : ''}`, value: r.id, info: r }));
}

const LAST_KEY = 'rimehold.tools.refrigerant';

/** Refrigerant to start a calculator with: the query, the last one used, else R-404A. */
export function initialRefrigerant(fromQuery: unknown): RefrigerantId {
  if (typeof fromQuery === 'string' && isRefrigerantId(fromQuery)) return fromQuery;
  try {
    const last = localStorage.getItem(LAST_KEY);
    if (last && isRefrigerantId(last)) return last;
  } catch {
    /* no storage */
  }
  return isRefrigerantId('R-404A') ? 'R-404A' : (listRefrigerants()[0]?.id as RefrigerantId);
}

export function rememberRefrigerant(id: RefrigerantId): void {
  try {
    localStorage.setItem(LAST_KEY, id);
  } catch {
    /* ignore */
  }
}

export function kindLabel(info: RefrigerantInfo): string {
  const k = String(info.kind);
  return k.charAt(0).toUpperCase() + k.slice(1).replace(/-/g, ' ');
}

export { getRefrigerant };
