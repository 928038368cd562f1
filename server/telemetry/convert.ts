/** Converts a validated telemetry payload into a stored reading for its box's current settings. */
import { superheatByPressureK, subcoolingK, valvePercent } from '../../shared/field';
import { RefrigerantRangeError, isRefrigerantId } from '../../shared/refrigerants';
import type { TelemetryPayload } from '../../shared/schemas/telemetry';
import type { ReadingDto } from '../../shared/schemas/live';
import type { SaturationMethod, ValveType } from '../../shared/domain';

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
  disabled: boolean;
}

export interface ConvertedReading extends ReadingDto {
  boxId: number;
  refrigerant: string;
  /** Why a derived value is missing, when one is (e.g. a pressure outside the refrigerant's range). */
  conversionNote: string | null;
}

function rangeSafe<T>(f: () => T): { value: T | null; note: string | null } {
  try {
    return { value: f(), note: null };
  } catch (e) {
    if (e instanceof RefrigerantRangeError || e instanceof RangeError) return { value: null, note: e.message };
    throw e;
  }
}

/**
 * Saturated suction temperature (dew curve, site elevation), superheat by the box's method,
 * subcooling when the liquid line is reported, valve % for electronic valves. A value outside the
 * refrigerant's range leaves that derived value null: the raw reading is still kept.
 */
export function convertReading(p: TelemetryPayload, box: BoxInfo): ConvertedReading {
  const notes: string[] = [];
  let saturatedSuctionC: number | null = null;
  let superheatK: number | null = null;
  const refrigerant = box.refrigerant;
  if (!isRefrigerantId(refrigerant)) {
    notes.push(`unknown refrigerant ${refrigerant}`);
  } else if (box.saturationMethod === 'coil-thermistor') {
    if (p.coilInletC === undefined) notes.push('coil-inlet thermistor not reported');
    else {
      saturatedSuctionC = p.coilInletC;
      superheatK = p.suctionLineC - p.coilInletC;
    }
  } else {
    const r = rangeSafe(() => superheatByPressureK({ refrigerant, suctionKPaG: p.suctionKPaG, suctionLineC: p.suctionLineC, elevationM: box.elevationM }));
    if (r.value) {
      saturatedSuctionC = r.value.saturatedSuctionC;
      superheatK = r.value.superheatK;
    } else if (r.note) notes.push(r.note);
  }
  let sub: number | null = null;
  if (isRefrigerantId(refrigerant) && p.liquidKPaG !== undefined && p.liquidLineC !== undefined) {
    const liquidKPaG = p.liquidKPaG;
    const liquidLineC = p.liquidLineC;
    const r = rangeSafe(() => subcoolingK({ refrigerant, liquidKPaG, liquidLineC, elevationM: box.elevationM }));
    sub = r.value;
    if (r.note) notes.push(r.note);
  }
  let pct: number | null = null;
  if (box.valveType === 'eev' && p.valveSteps !== undefined) {
    const steps = p.valveSteps;
    const r = rangeSafe(() => valvePercent(steps, box.valveFullSteps));
    pct = r.value;
    if (r.note) notes.push(r.note);
  }
  return {
    boxId: box.boxId,
    refrigerant,
    ts: p.ts,
    seq: p.seq,
    boxAirC: p.boxAirC,
    suctionKPaG: p.suctionKPaG,
    suctionLineC: p.suctionLineC,
    saturatedSuctionC,
    superheatK,
    coilInletC: p.coilInletC ?? null,
    dischargeAirC: p.dischargeAirC ?? null,
    liquidKPaG: p.liquidKPaG ?? null,
    liquidLineC: p.liquidLineC ?? null,
    subcoolingK: sub,
    valveSteps: box.valveType === 'eev' ? (p.valveSteps ?? null) : null,
    valvePercent: pct,
    compressorOn: p.compressorOn,
    fanOn: p.fanOn,
    defrostOn: p.defrostOn,
    doorOpen: p.doorOpen,
    conversionNote: notes.length ? notes.join('; ') : null,
  };
}
