/** Converts a validated telemetry payload into a stored reading for its box's settings at the reading's time. */
import { atmosphericPressureKPa, SEA_LEVEL_PRESSURE_KPA, superheatByPressureK, superheatByThermistorsK, subcoolingK, valvePercent } from '../../shared/field';
import { isRefrigerantId, SupercriticalError } from '../../shared/refrigerants';
import type { TelemetryPayload } from '../../shared/schemas/telemetry';
import type { ReadingDto, ReadingFlag, ReadingFlagTarget } from '../../shared/schemas/live';
import type { GaugeReference } from '../../shared/schemas/boxes';
import type { SaturationMethod, ValveType } from '../../shared/domain';
import { assessReading, type SensorAssessment, type SensorField } from './quality';

/** What the conversion needs to know about a box (cached by the ingest, refreshed on change). */
export interface BoxInfo {
  boxId: number;
  customerId: number;
  controllerId: number;
  serial: string;
  refrigerant: string;
  saturationMethod: SaturationMethod;
  valveType: ValveType;
  elevationM: number;
  valveFullSteps: number;
  /** What the controller's pressure transducers read against; vented gauge when not given. */
  gaugeReference?: GaugeReference;
  disabled: boolean;
}

export interface ConvertedReading extends ReadingDto {
  boxId: number;
  refrigerant: string;
  /** Why a derived value is missing, when one is (e.g. a pressure outside the refrigerant's range). */
  conversionNote: string | null;
  flags: ReadingFlag[];
  glideK: number | null;
}

/** Subcooling below this is flagged (flash gas or a bad sensor), K: any negative value (common practice: a full liquid line is at or below its bubble point). */
export const NEGATIVE_SUBCOOLING_BELOW_K = 0;

/**
 * A transducer reading as a gauge at the site would show it, kPa(g) against the site's standard
 * atmosphere: vented gauges read that already; a sealed gauge reads against standard sea-level
 * atmosphere (101.325 kPa, U.S. Standard Atmosphere 1976); an absolute one against vacuum.
 */
export function toSiteGaugeKPaG(reportedKPa: number, reference: GaugeReference, elevationM: number): number {
  if (reference === 'vented-gauge') return reportedKPa;
  const absKPa = reference === 'sealed-gauge' ? reportedKPa + SEA_LEVEL_PRESSURE_KPA : reportedKPa;
  return absKPa - atmosphericPressureKPa(elevationM);
}

function calc<T>(f: () => T): { value: T | null; note: string | null; supercritical: boolean } {
  try {
    return { value: f(), note: null, supercritical: false };
  } catch (e) {
    // Range, unknown-state and supercritical errors of the engine all leave the value blank with their reason.
    if (e instanceof Error) return { value: null, note: e.message, supercritical: e instanceof SupercriticalError };
    throw e;
  }
}

const fmtK = (k: number) => `${k.toFixed(1).replace('-', '−')} K`;

/**
 * Saturated suction temperature (dew point at the site's atmosphere, by the controller's gauge
 * reference), superheat by the box's method (two thermistors: against the dew point the glide puts
 * above the coil-inlet reading), subcooling when the liquid line is reported, valve % for electronic
 * valves. Nothing is computed from a failed sensor; every blank or doubtful value gets a stated
 * flag. The raw reading is always kept (pressures stored as site gauge).
 */
export function convertReading(p: TelemetryPayload, box: BoxInfo, sensors?: SensorAssessment): ConvertedReading {
  const ref = box.gaugeReference ?? 'vented-gauge';
  const q = sensors ?? assessReading(p, box.saturationMethod, ref);
  const flags: ReadingFlag[] = [...q.flags];
  const notes: string[] = [];
  const note = (affects: ReadingFlagTarget[], message: string) => {
    notes.push(message);
    flags.push({ code: 'conversion', affects, message });
  };
  const ok = (...fields: SensorField[]) => fields.every((f) => !q.failed.has(f));
  let saturatedSuctionC: number | null = null;
  let superheatK: number | null = null;
  let glideK: number | null = null;
  const refrigerant = box.refrigerant;
  const site = calc(() => ({
    suction: toSiteGaugeKPaG(p.suctionKPaG, ref, box.elevationM),
    liquid: p.liquidKPaG === undefined ? undefined : toSiteGaugeKPaG(p.liquidKPaG, ref, box.elevationM),
  }));
  if (!site.value) note(['suctionKPaG', 'saturatedSuctionC', 'superheatK', 'subcoolingK'], site.note ?? 'pressure not converted');
  const suctionKPaG = site.value?.suction ?? p.suctionKPaG;
  const liquidKPaG = site.value ? site.value.liquid : p.liquidKPaG;
  if (!isRefrigerantId(refrigerant)) {
    note(['saturatedSuctionC', 'superheatK', 'subcoolingK'], `unknown refrigerant ${refrigerant}`);
  } else if (box.saturationMethod === 'coil-thermistor') {
    const inlet = p.coilInletC;
    if (inlet === undefined) note(['saturatedSuctionC', 'superheatK'], 'coil-inlet thermistor not reported');
    else if (ok('coilInletC')) {
      const t = calc(() => superheatByThermistorsK({ refrigerant, suctionLineC: p.suctionLineC, coilInletC: inlet }));
      if (t.value) {
        glideK = t.value.glideK;
        // The inlet sensor reads two-phase refrigerant near its bubble point; the dew point lies the glide above it.
        saturatedSuctionC = t.value.dewPointC;
        if (ok('suctionLineC')) {
          superheatK = t.value.superheatAgainstDewK;
          if (t.value.glideWarning) {
            flags.push({
              code: 'glide',
              affects: ['superheatK', 'saturatedSuctionC'],
              message: `${refrigerant} glides about ${fmtK(t.value.glideK)} here: superheat is taken against the dew point (coil inlet + glide), not outlet − inlet (${fmtK(t.value.superheatK)})`,
            });
          }
        }
      } else if (t.note) note(['saturatedSuctionC', 'superheatK'], t.note);
    }
  } else if (ok('suctionKPaG') && site.value) {
    // The engine subtracts the site's standard atmosphere: give it the site-gauge pressure.
    const r = calc(() => superheatByPressureK({ refrigerant, suctionKPaG, suctionLineC: p.suctionLineC, elevationM: box.elevationM }));
    if (r.value) {
      saturatedSuctionC = r.value.saturatedSuctionC;
      superheatK = ok('suctionLineC') ? r.value.superheatK : null;
    } else if (r.note) note(['saturatedSuctionC', 'superheatK'], r.note);
  }
  let sub: number | null = null;
  if (isRefrigerantId(refrigerant) && liquidKPaG !== undefined && p.liquidLineC !== undefined && ok('liquidKPaG', 'liquidLineC')) {
    const liquidLineC = p.liquidLineC;
    const r = calc(() => subcoolingK({ refrigerant, liquidKPaG, liquidLineC, elevationM: box.elevationM }));
    sub = r.value;
    if (r.supercritical) {
      // Above the critical pressure (R-744 on a warm day) there is no liquid to subcool: say so, not "out of range".
      notes.push(r.note ?? 'supercritical');
      flags.push({ code: 'supercritical', affects: ['subcoolingK'], message: `High side supercritical: no saturation and no subcooling (${r.note ?? ''})` });
    } else if (r.note) note(['subcoolingK'], r.note);
    if (sub !== null && sub < NEGATIVE_SUBCOOLING_BELOW_K) {
      flags.push({ code: 'negative-subcooling', affects: ['subcoolingK'], message: `Negative subcooling (${fmtK(sub)}): flash gas in the liquid line, or a bad liquid-line sensor or transducer` });
    }
  }
  // A supercritical high side has no subcooling; how close the gas-cooler outlet comes to the air
  // entering the gas cooler (its approach) is what a CO2 technician reads instead.
  const supercritical = flags.some((f) => f.code === 'supercritical');
  const approachK = supercritical && p.liquidLineC !== undefined && p.condenserAirC !== undefined && ok('liquidLineC', 'condenserAirC') ? p.liquidLineC - p.condenserAirC : null;
  let pct: number | null = null;
  if (box.valveType === 'eev' && p.valveSteps !== undefined) {
    const steps = p.valveSteps;
    const r = calc(() => valvePercent(steps, box.valveFullSteps));
    pct = r.value;
    if (r.note) note(['valvePercent'], r.note);
  }
  return {
    boxId: box.boxId,
    refrigerant,
    ts: p.ts,
    seq: p.seq,
    boxAirC: p.boxAirC,
    suctionKPaG,
    suctionLineC: p.suctionLineC,
    saturatedSuctionC,
    superheatK,
    coilInletC: p.coilInletC ?? null,
    dischargeAirC: p.dischargeAirC ?? null,
    liquidKPaG: liquidKPaG ?? null,
    liquidLineC: p.liquidLineC ?? null,
    subcoolingK: sub,
    condenserAirC: p.condenserAirC ?? null,
    approachK,
    valveSteps: box.valveType === 'eev' ? (p.valveSteps ?? null) : null,
    valvePercent: pct,
    compressorOn: p.compressorOn,
    fanOn: p.fanOn,
    defrostOn: p.defrostOn,
    doorOpen: p.doorOpen,
    conversionNote: notes.length ? notes.join('; ') : null,
    flags,
    glideK,
  };
}
