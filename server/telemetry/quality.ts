/**
 * Sensor quality at ingest: an open thermistor (reads at the cold end of its input), a shorted one
 * (hot end), a reading outside what the sensor can plausibly see in a walk-in, a transducer at an
 * end of its range, and a stuck sensor (the same value, bit-identical, for hours: while the
 * compressor cycled, or for box air whatever the compressor did). A failed sensor gets a stated reason and nothing is computed from it.
 * Stuck detection keeps a little state per box in memory, bounded by MAX_TRACKED_BOXES.
 */
import { SUCTION_MAX_KPAG, SUCTION_MIN_KPAG, thermistorFault } from '../../shared/rules/sensors';
import type { SaturationMethod } from '../../shared/domain';
import type { ReadingFlag, ReadingFlagCode, ReadingFlagTarget } from '../../shared/schemas/live';
import type { TelemetryPayload } from '../../shared/schemas/telemetry';
import type { GaugeReference } from '../../shared/schemas/boxes';

export const THERMISTOR_FIELDS = ['boxAirC', 'suctionLineC', 'coilInletC', 'dischargeAirC', 'liquidLineC', 'condenserAirC'] as const;
export const TRANSDUCER_FIELDS = ['suctionKPaG', 'liquidKPaG'] as const;
export type ThermistorField = (typeof THERMISTOR_FIELDS)[number];
export type TransducerField = (typeof TRANSDUCER_FIELDS)[number];
export type SensorField = ThermistorField | TransducerField;

/**
 * What each thermistor can plausibly read in a walk-in cooler or freezer, °C (our choice: the
 * coldest low-temperature evaporators run near −45 °C, defrost heats coil and suction line to some
 * +30 °C, a hot-day liquid line stays under +75 °C). Outside it the sensor is doubted, not used.
 */
export const PLAUSIBLE_C: Record<ThermistorField, { min: number; max: number }> = {
  boxAirC: { min: -50, max: 60 },
  suctionLineC: { min: -55, max: 60 },
  coilInletC: { min: -55, max: 60 },
  dischargeAirC: { min: -50, max: 60 },
  // Outdoor air at a condenser or gas cooler: a cold winter to a hot roof (our choice).
  condenserAirC: { min: -45, max: 65 },
  liquidLineC: { min: -40, max: 80 },
};

/** An identical value for this long while the compressor cycled is a stuck sensor, ms (the sensor-fault rule's 180 min default). */
export const STUCK_MIN_MS = 3 * 3_600_000;
/**
 * Compressor starts needed during the flat line of a sensor other than box air: the system cycled,
 * so a working sensor would have moved (our choice). A liquid line in a quiet machine room can sit
 * still while the system is off; box air cannot (see shared/rules/sensors.ts), so it needs none.
 */
export const STUCK_MIN_STARTS = 2;
/** The sensors judged stuck on a flat line alone, whatever the compressor did. */
const STUCK_WITHOUT_STARTS: ReadonlySet<SensorField> = new Set(['boxAirC']);
/** Boxes whose stuck state is kept; the oldest is forgotten beyond this (a forgotten box starts over). */
export const MAX_TRACKED_BOXES = 50_000;
/** An absolute transducer at or below this reads a full vacuum: the bottom end of its range, kPa. */
const ABSOLUTE_BOTTOM_KPA = 0.5;

const LABEL: Record<SensorField, string> = {
  boxAirC: 'Box-air sensor',
  suctionLineC: 'Suction-line sensor',
  coilInletC: 'Coil-inlet sensor',
  dischargeAirC: 'Discharge-air sensor',
  condenserAirC: 'Condenser-air sensor',
  liquidLineC: 'Liquid-line sensor',
  suctionKPaG: 'Suction transducer',
  liquidKPaG: 'Liquid-line transducer',
};

const WORDS: Partial<Record<ReadingFlagTarget, string>> = { saturatedSuctionC: 'saturated suction', superheatK: 'superheat', subcoolingK: 'subcooling', approachK: 'gas-cooler approach' };

/** Derived values computed from a sensor, by the box's saturation method. */
export function dependentsOf(field: SensorField, method: SaturationMethod): ReadingFlagTarget[] {
  switch (field) {
    case 'suctionLineC':
      return ['superheatK'];
    case 'suctionKPaG':
      return method === 'pressure' ? ['saturatedSuctionC', 'superheatK'] : [];
    case 'coilInletC':
      return method === 'coil-thermistor' ? ['saturatedSuctionC', 'superheatK'] : [];
    case 'liquidKPaG':
      return ['subcoolingK'];
    case 'liquidLineC':
      return ['subcoolingK', 'approachK'];
    case 'condenserAirC':
      return ['approachK'];
    default:
      return [];
  }
}

/** " — no saturated suction or superheat" for the values a failed sensor blanks ("" when none). */
export function noValuesText(targets: ReadingFlagTarget[]): string {
  const words = targets.map((t) => WORDS[t]).filter((w): w is string => w !== undefined);
  if (words.length === 0) return '';
  return ` — no ${words.length === 1 ? words[0] : `${words.slice(0, -1).join(', ')} or ${words[words.length - 1]}`}`;
}

const fmtC = (c: number) => `${c.toFixed(1).replace('-', '−')} °C`;

function flag(code: ReadingFlagCode, field: SensorField, method: SaturationMethod, what: string): ReadingFlag {
  const blanks = dependentsOf(field, method);
  return { code, sensor: field, affects: [field, ...blanks], message: `${LABEL[field]} ${what}${noValuesText(blanks)}` };
}

/** Sensors of a reading that failed and why; convert.ts computes nothing from them. */
export interface SensorAssessment {
  failed: Set<SensorField>;
  flags: ReadingFlag[];
}

/** Open / shorted / implausible thermistors and transducers at an end of their range, in one reading (no state). */
export function assessReading(p: TelemetryPayload, method: SaturationMethod, gaugeReference: GaugeReference = 'vented-gauge'): SensorAssessment {
  const failed = new Set<SensorField>();
  const flags: ReadingFlag[] = [];
  for (const field of THERMISTOR_FIELDS) {
    const c = p[field];
    if (c === undefined) continue;
    const end = thermistorFault(c);
    const range = PLAUSIBLE_C[field];
    let f: ReadingFlag | null = null;
    if (end === 'open') f = flag('sensor-open', field, method, `open (reads ${fmtC(c)})`);
    else if (end === 'shorted') f = flag('sensor-shorted', field, method, `shorted (reads ${fmtC(c)})`);
    else if (c < range.min || c > range.max) f = flag('sensor-out-of-range', field, method, `out of range (reads ${fmtC(c)}, plausible ${fmtC(range.min)} to ${fmtC(range.max)})`);
    if (f) {
      failed.add(field);
      flags.push(f);
    }
  }
  for (const field of TRANSDUCER_FIELDS) {
    const v = p[field];
    if (v === undefined) continue;
    const bottom = gaugeReference === 'absolute' ? v <= ABSOLUTE_BOTTOM_KPA : v <= SUCTION_MIN_KPAG;
    if (bottom || v >= SUCTION_MAX_KPAG) {
      failed.add(field);
      flags.push(flag('sensor-out-of-range', field, method, `at the ${bottom ? 'bottom' : 'top'} end of its range (reads ${Math.round(v)} kPa)`));
    }
  }
  return { failed, flags };
}

interface FlatLine {
  value: number;
  sinceMs: number;
  starts: number;
}

interface BoxState {
  lastTsMs: number;
  compressorOn: boolean;
  lines: Map<SensorField, FlatLine>;
}

/** Per-box stuck-sensor state (reading time, not arrival time: replayed readings arrive late). */
export class SensorQuality {
  private boxes = new Map<number, BoxState>();

  /** Assessment of one reading of a box, including stuck sensors; updates the state for readings newer than the last seen. */
  assess(boxId: number, p: TelemetryPayload, method: SaturationMethod, gaugeReference: GaugeReference = 'vented-gauge'): SensorAssessment {
    const a = assessReading(p, method, gaugeReference);
    const tsMs = Date.parse(p.ts);
    let st = this.boxes.get(boxId);
    if (st && tsMs <= st.lastTsMs) return a; // older or re-delivered: the flat lines are not its to judge
    if (!st) {
      if (this.boxes.size >= MAX_TRACKED_BOXES) {
        const oldest = this.boxes.keys().next();
        if (!oldest.done) this.boxes.delete(oldest.value);
      }
      st = { lastTsMs: tsMs, compressorOn: p.compressorOn, lines: new Map() };
      this.boxes.set(boxId, st);
    }
    const started = p.compressorOn && !st.compressorOn;
    for (const field of [...THERMISTOR_FIELDS, ...TRANSDUCER_FIELDS]) {
      const v = p[field];
      if (v === undefined || a.failed.has(field)) {
        st.lines.delete(field);
        continue;
      }
      const line = st.lines.get(field);
      if (!line || line.value !== v) {
        st.lines.set(field, { value: v, sinceMs: tsMs, starts: 0 });
        continue;
      }
      if (started) line.starts++;
      const flatMs = tsMs - line.sinceMs;
      const cycled = line.starts >= STUCK_MIN_STARTS;
      if (flatMs >= STUCK_MIN_MS && (cycled || STUCK_WITHOUT_STARTS.has(field))) {
        a.failed.add(field);
        const shown = field.endsWith('KPaG') ? `${Math.round(v)} kPa` : fmtC(v);
        const while_ = cycled ? ' while the compressor cycled' : line.starts === 0 && !p.compressorOn ? ' with the compressor off' : '';
        a.flags.push(flag('sensor-stuck', field, method, `stuck (${shown} unchanged for ${(flatMs / 3_600_000).toFixed(1)} h${while_})`));
      }
    }
    st.lastTsMs = tsMs;
    st.compressorOn = p.compressorOn;
    return a;
  }

  /** Boxes tracked now (tests, metrics). */
  get size(): number {
    return this.boxes.size;
  }
}
