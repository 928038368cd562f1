import { z } from 'zod';
import { EVAPORATOR_SUPERHEAT_FLOOR_K } from '../field/superheat';
import type { ValveType } from '../domain';
import { ConfigSetPayload, type ConfigAckPayload } from './telemetry';

/**
 * PUT /api/v1/boxes/:id/settings. A superheat target below the evaporator superheat floor is
 * refused unless `override` carries a reason.
 */
export const BoxSettingsBody = ConfigSetPayload.omit({ id: true })
  .extend({ override: z.object({ reason: z.string().trim().min(10, 'Give a reason of at least 10 characters').max(500) }).optional() })
  .strict()
  .refine((b) => Object.keys(b).some((k) => k !== 'override'), { message: 'Change at least one setting' });
export type BoxSettingsBody = z.infer<typeof BoxSettingsBody>;

export type SettingsChangeState = 'pending' | 'applied' | 'rejected' | 'timed-out';

export interface SettingsChangeDto {
  id: string;
  boxId: number;
  requested: Record<string, unknown>;
  applied: Record<string, unknown> | null;
  state: SettingsChangeState;
  requestedBy: number;
  requestedAt: string;
  resolvedAt: string | null;
  error: string | null;
}

/** The settings a change asked for, as stored with the pending change (no id, no override). */
export const RequestedSettings = ConfigSetPayload.omit({ id: true });
export type RequestedSettings = z.infer<typeof RequestedSettings>;
export type AppliedSettings = ConfigAckPayload['applied'];

/** What the server may take from a controller's ack: the accepted values and, per refused field, why. */
export interface AckScreen {
  accepted: AppliedSettings;
  /** Keyed by field (`setpointC`, `defrost.defrostType`); the value is a sentence. */
  refused: Record<string, string>;
}

/** The box facts an ack is checked against: alarm limits in °C, the valve type, whether the request carried an override. */
export interface AckBoxLimits {
  lowLimitC: number;
  highLimitC: number;
  valveType: ValveType;
  /** The pending request carried an override reason for a superheat target below the minimum. */
  overridden: boolean;
}

const NOT_REQUESTED = 'Not part of the pending request';

/**
 * Splits the values a controller reports as applied into those the server accepts and those it
 * refuses: only fields of the pending request are accepted; a named choice (refrigerant, defrost
 * type) only as requested; a setpoint only strictly between the box's low and high limits (°C); a
 * superheat target (K) only on an electronic-valve box and, without an override, not below the
 * evaporator superheat floor. The same checks the request itself passed.
 */
export function screenAppliedSettings(requested: RequestedSettings, applied: AppliedSettings, box: AckBoxLimits): AckScreen {
  const accepted: AppliedSettings = {};
  const refused: Record<string, string> = {};
  if (applied.superheatTargetK !== undefined) {
    const v = applied.superheatTargetK;
    if (requested.superheatTargetK === undefined) refused.superheatTargetK = NOT_REQUESTED;
    else if (box.valveType === 'txv') refused.superheatTargetK = 'Not adjustable on a thermostatic-valve box';
    else if (v < EVAPORATOR_SUPERHEAT_FLOOR_K && !box.overridden) refused.superheatTargetK = 'Below the evaporator superheat floor without an override';
    else accepted.superheatTargetK = v;
  }
  if (applied.setpointC !== undefined) {
    const v = applied.setpointC;
    if (requested.setpointC === undefined) refused.setpointC = NOT_REQUESTED;
    else if (v <= box.lowLimitC || v >= box.highLimitC) refused.setpointC = `Outside the alarm limits (${box.lowLimitC} °C to ${box.highLimitC} °C)`;
    else accepted.setpointC = v;
  }
  if (applied.differentialK !== undefined) {
    if (requested.differentialK === undefined) refused.differentialK = NOT_REQUESTED;
    else accepted.differentialK = applied.differentialK;
  }
  if (applied.refrigerant !== undefined) {
    if (requested.refrigerant === undefined) refused.refrigerant = NOT_REQUESTED;
    else if (applied.refrigerant !== requested.refrigerant) refused.refrigerant = `Not the requested refrigerant (${requested.refrigerant})`;
    else accepted.refrigerant = applied.refrigerant;
  }
  if (applied.defrost !== undefined) {
    const asked = requested.defrost ?? {};
    const ok: NonNullable<AppliedSettings['defrost']> = {};
    for (const key of Object.keys(applied.defrost) as Array<keyof typeof applied.defrost>) {
      const v = applied.defrost[key];
      if (v === undefined) continue;
      if (asked[key] === undefined) refused[`defrost.${key}`] = NOT_REQUESTED;
      else if (key === 'defrostType' && v !== asked.defrostType) refused['defrost.defrostType'] = `Not the requested defrost type (${asked.defrostType})`;
      else Object.assign(ok, { [key]: v });
    }
    if (Object.keys(ok).length > 0) accepted.defrost = ok;
  }
  return { accepted, refused };
}
