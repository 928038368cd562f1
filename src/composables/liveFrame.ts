/** Guard for server → browser WebSocket frames: anything that does not match a LiveEvent is dropped. */
import { z } from 'zod';
import { READING_FLAG_CODES, READING_FLAG_TARGETS, type LiveEvent } from '@shared/schemas/live';
import { LiveAlarmFrame } from '@/api/alarms';

const num = z.number().finite();
const numOrNull = num.nullable();
const isoString = z.string().min(1).refine((s) => !Number.isNaN(Date.parse(s)), 'not a time');

const FlagTarget = z.enum(READING_FLAG_TARGETS);
/** A stated reason with the reading (a failed sensor, a conversion note…): kept, or the page would drop it at the next live reading. */
const Flag = z.object({ code: z.enum(READING_FLAG_CODES), sensor: FlagTarget.optional(), affects: z.array(FlagTarget).max(20), message: z.string().max(1000) });

const Reading = z.object({
  ts: isoString,
  seq: z.number().int().nonnegative(),
  boxAirC: num,
  suctionKPaG: num,
  suctionLineC: num,
  saturatedSuctionC: numOrNull,
  superheatK: numOrNull,
  coilInletC: numOrNull,
  dischargeAirC: numOrNull,
  liquidKPaG: numOrNull,
  liquidLineC: numOrNull,
  subcoolingK: numOrNull,
  valveSteps: numOrNull,
  valvePercent: numOrNull,
  compressorOn: z.boolean(),
  fanOn: z.boolean(),
  defrostOn: z.boolean(),
  doorOpen: z.boolean(),
  flags: z.array(Flag).max(50).optional(),
  glideK: numOrNull.optional(),
  condenserAirC: numOrNull.optional(),
  approachK: numOrNull.optional(),
});

const Change = z.object({
  id: z.string().min(1),
  boxId: z.number().int().positive(),
  requested: z.record(z.string(), z.unknown()),
  applied: z.record(z.string(), z.unknown()).nullable(),
  state: z.enum(['pending', 'applied', 'rejected', 'timed-out']),
  requestedBy: z.number().int(),
  requestedAt: isoString,
  resolvedAt: isoString.nullable(),
  error: z.string().nullable(),
});

const boxId = z.number().int().positive();

const Frame = z.discriminatedUnion('type', [
  z.object({ type: z.literal('hello'), userId: z.number().int(), serverTime: isoString }),
  z.object({ type: z.literal('reading'), boxId, reading: Reading }),
  z.object({ type: z.literal('controller'), boxId, serial: z.string(), online: z.boolean(), at: isoString }),
  z.object({ type: z.literal('settings'), boxId, change: Change }),
  z.object({ type: z.literal('ping'), at: isoString }),
  z.object({ type: z.literal('maintenance'), boxId, until: isoString.nullable() }),
  LiveAlarmFrame,
]);

/** Parses a raw frame (string or already-decoded value); null when it is not a valid LiveEvent. */
export function parseLiveFrame(raw: unknown): LiveEvent | null {
  let value: unknown = raw;
  if (typeof raw === 'string') {
    if (raw.length > 256 * 1024) return null;
    try {
      value = JSON.parse(raw);
    } catch {
      return null;
    }
  }
  const r = Frame.safeParse(value);
  // Extra keys are stripped by zod objects; the result carries only the documented fields.
  return r.success ? (r.data as LiveEvent) : null;
}
