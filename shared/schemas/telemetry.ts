/**
 * The device protocol's payloads (docs/device-protocol.md). Every MQTT frame is parsed with these;
 * a frame that fails is counted by reason and dropped.
 */
import { z } from 'zod';
import { REFRIGERANT_IDS } from '../refrigerants';
import { DefrostSettings, BOX_LIMITS } from './boxes';

export const TOPIC_PREFIX = 'rimehold/v1/ctl';
export const MAX_TELEMETRY_BYTES = 4096;
/** A reading may be at most this far ahead of the server clock. */
export const MAX_FUTURE_SKEW_MS = 60_000;

/** Sensor temperatures a thermistor input can report, °C (an open or shorted NTC reads at the ends). */
const tempC = z.number().finite().min(-60).max(130);
/** Gauge pressures, kPa(g): -101 (vacuum) to 14,000 (R-744 high side). */
const kPaG = z.number().finite().min(-101).max(14_000);

/**
 * A reading's instant, normalised to millisecond UTC ISO (`…00.5Z` and `…00.500Z` become
 * `…00.500Z`) so that every spelling of one instant keys the same stored reading.
 */
export const instantUtc = z.iso.datetime({ offset: false, precision: undefined }).transform((s, ctx) => {
  const ms = Date.parse(s);
  if (Number.isNaN(ms)) {
    ctx.issues.push({ code: 'custom', message: 'Not a valid instant', input: s });
    return z.NEVER;
  }
  return new Date(ms).toISOString();
});

export const TelemetryPayload = z
  .object({
    seq: z.number().int().min(0).max(Number.MAX_SAFE_INTEGER),
    ts: instantUtc,
    suctionKPaG: kPaG,
    suctionLineC: tempC,
    boxAirC: tempC,
    coilInletC: tempC.optional(),
    dischargeAirC: tempC.optional(),
    liquidKPaG: kPaG.optional(),
    liquidLineC: tempC.optional(),
    /** Air entering the condenser or gas cooler (optional; gives an R-744 gas cooler's approach). */
    condenserAirC: tempC.optional(),
    valveSteps: z.number().int().min(0).max(10_000).optional(),
    compressorOn: z.boolean(),
    fanOn: z.boolean(),
    defrostOn: z.boolean(),
    doorOpen: z.boolean(),
  })
  .strict();
export type TelemetryPayload = z.infer<typeof TelemetryPayload>;

export const StatusPayload = z.enum(['online', 'offline']);

/** Server → controller: a change of settings, with an id the ack echoes. */
export const ConfigSetPayload = z
  .object({
    id: z.string().min(1).max(64),
    superheatTargetK: z.number().min(BOX_LIMITS.superheatTargetK.min).max(BOX_LIMITS.superheatTargetK.max).optional(),
    setpointC: z.number().min(BOX_LIMITS.setpointC.min).max(BOX_LIMITS.setpointC.max).optional(),
    differentialK: z.number().min(BOX_LIMITS.differentialK.min).max(BOX_LIMITS.differentialK.max).optional(),
    refrigerant: z.enum(REFRIGERANT_IDS).optional(),
    defrost: DefrostSettings.partial().optional(),
  })
  .strict();
export type ConfigSetPayload = z.infer<typeof ConfigSetPayload>;

/** Controller → server: the values actually applied (or why not). */
export const ConfigAckPayload = z
  .object({
    id: z.string().min(1).max(64),
    ok: z.boolean(),
    applied: ConfigSetPayload.omit({ id: true }).partial().default({}),
    error: z.string().max(200).optional(),
  })
  .strict();
export type ConfigAckPayload = z.infer<typeof ConfigAckPayload>;

/** Most seqs one `committed` message carries; a longer list goes out as several messages. */
export const MAX_COMMITTED_SEQS = 500;
/**
 * How long a controller keeps a reading after the broker's PUBACK while waiting for its seq in a
 * `committed` message (10 min). Longer than any broker save interval Rimehold allows
 * (MOSQUITTO_AUTOSAVE_S ≤ 300), so a reading still unsaved by the broker is never let go unconfirmed.
 */
export const COMMIT_HOLD_MS = 10 * 60_000;

/**
 * Rimehold → controller, QoS 0: seqs of this controller's readings that the ingest has settled —
 * stored, found already stored, or refused for good — and acknowledged to the broker. The
 * controller may forget those; readings it still holds are sent again on its next connection.
 */
export const CommittedPayload = z
  .object({ seqs: z.array(z.number().int().min(0).max(Number.MAX_SAFE_INTEGER)).min(1).max(MAX_COMMITTED_SEQS) })
  .strict();
export type CommittedPayload = z.infer<typeof CommittedPayload>;

/**
 * Rimehold → every controller, QoS 0, empty payload: an ingest has just subscribed afresh (its
 * session was gone, or a shared-subscription worker subscribed again), so a reading sent since the
 * broker came back may have found no subscriber. A controller sends its held readings again.
 */
export const INGEST_READY_TOPIC = 'rimehold/v1/ingest/ready';

/** Topic helpers. */
export const topics = {
  telemetry: (serial: string) => `${TOPIC_PREFIX}/${serial}/telemetry`,
  status: (serial: string) => `${TOPIC_PREFIX}/${serial}/status`,
  configSet: (serial: string) => `${TOPIC_PREFIX}/${serial}/config/set`,
  configAck: (serial: string) => `${TOPIC_PREFIX}/${serial}/config/ack`,
  committed: (serial: string) => `${TOPIC_PREFIX}/${serial}/committed`,
};

/** Splits `rimehold/v1/ctl/{serial}/{rest}`; null when the topic is not a controller topic. */
export function parseControllerTopic(topic: string): { serial: string; kind: string } | null {
  const prefix = `${TOPIC_PREFIX}/`;
  if (!topic.startsWith(prefix)) return null;
  const rest = topic.slice(prefix.length);
  const slash = rest.indexOf('/');
  if (slash <= 0) return null;
  return { serial: rest.slice(0, slash), kind: rest.slice(slash + 1) };
}
