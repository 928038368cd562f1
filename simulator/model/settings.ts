/**
 * Which config/set values a simulated controller can apply. All-or-nothing: a request with any value
 * the hardware cannot honour is refused whole with a reason, and nothing is clamped or half-applied.
 */
import type { ConfigSetPayload } from '../../shared/schemas/telemetry';
import { getRefrigerant } from '../../shared/refrigerants';
import type { BoxSettings } from './params';
import type { BoxModel } from './box';

export type SettingsRequest = Omit<ConfigSetPayload, 'id'>;
export type SettingsResult =
  | { ok: true; settings: Partial<BoxSettings>; applied: SettingsRequest }
  | { ok: false; error: string };

/** The lowest evaporating temperature the model reaches below setpoint, K (rated TD plus pump-down margin). */
const EVAPORATING_MARGIN_K = 25;

/**
 * Why the model cannot simulate a refrigerant, or null. The model is a subcritical direct-expansion
 * system with its own condensing unit: it has no gas cooler, flash tank or cascade, so an R-744 box
 * would be a fake (a pump-down cut-out below the triple point, a condensing clamp near 30 °C).
 */
export function unsimulatedRefrigerant(refrigerant: string): string | null {
  return refrigerant === 'R-744' ? 'R-744 (CO₂) systems are not simulated: the model has no gas cooler, flash tank or cascade' : null;
}

/** Checks a config request against the box's hardware; returns the settings to apply or why not. */
export function checkSettings(model: BoxModel, req: SettingsRequest): SettingsResult {
  const p = model.params;
  const next: Partial<BoxSettings> = {};
  if (req.setpointC !== undefined) next.setpointC = req.setpointC;
  if (req.differentialK !== undefined) next.differentialK = req.differentialK;
  if (req.refrigerant !== undefined) next.refrigerant = req.refrigerant;
  if (req.defrost) Object.assign(next, stripUndefined(req.defrost));
  if (req.superheatTargetK !== undefined) {
    if (p.valveType === 'txv') return { ok: false, error: 'thermostatic valve: its superheat is set at the valve itself, not by this node' };
    next.superheatTargetK = req.superheatTargetK;
  }
  const merged: BoxSettings = { ...p, ...next };
  const info = getRefrigerant(merged.refrigerant);
  // Refused, and none is seeded or run (simulator/fleet.ts skips one in a fleet file).
  const unsimulated = unsimulatedRefrigerant(merged.refrigerant);
  if (unsimulated !== null) return { ok: false, error: unsimulated };
  if (merged.setpointC - EVAPORATING_MARGIN_K < info.validRange.minC) {
    return { ok: false, error: `${merged.refrigerant}: setpoint ${merged.setpointC} °C is too cold for its saturation tables` };
  }
  if (merged.defrostType === 'electric' && p.defrostHardware !== 'electric') return { ok: false, error: 'electric defrost: this box has no defrost heaters' };
  if (merged.defrostType === 'hot-gas' && p.defrostHardware !== 'hot-gas') return { ok: false, error: 'hot-gas defrost: this box has no hot-gas line' };
  // Off-cycle defrost melts frost with box air, so the box must run above freezing (TRADE-NOTES §2, ACHR 110983).
  if (merged.defrostType === 'off-cycle' && merged.setpointC <= 0) {
    return { ok: false, error: 'off-cycle defrost needs box air above 0 °C; choose a heated defrost' };
  }
  return { ok: true, settings: next, applied: { ...req } };
}

function stripUndefined<T extends object>(o: T): Partial<T> {
  const out: Partial<T> = {};
  for (const [k, v] of Object.entries(o) as [keyof T, T[keyof T]][]) if (v !== undefined) out[k] = v;
  return out;
}
