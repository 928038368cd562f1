// The charging checks of a service visit: measured superheat and subcooling from the entered
// pressures and temperatures through the shared engine (shared/field), the sight glass, and the
// liquid receiver level. Nothing here re-derives a saturation value: shared/field does.
import { highSideReading, describeSupercriticalError, superheatByPressureK } from '../field/index';
import { isRefrigerantId, RefrigerantRangeError, type RefrigerantId } from '../refrigerants/index';

/**
 * Highest liquid receiver level, %, before a warning. Common practice: receivers are kept at most
 * about 80 % full at operating conditions so that liquid has room to expand and to take the charge
 * pumped down in a defrost or off cycle; the equipment maker's figure governs where given.
 */
export const RECEIVER_LEVEL_MAX_PERCENT = 80;

/** What a technician enters (pressures kPa(g), temperatures °C); every field optional. */
export interface ChargingCheckInput {
  suctionKPaG?: number | null;
  suctionLineC?: number | null;
  liquidKPaG?: number | null;
  liquidLineC?: number | null;
  sightGlassClear?: boolean | null;
  receiverLevelPercent?: number | null;
}

/** The computed results (°C, K), with a note for each value that could not be computed. */
export interface ChargingCheckResult {
  saturatedSuctionC: number | null;
  superheatK: number | null;
  saturatedLiquidC: number | null;
  subcoolingK: number | null;
  highSideState: 'subcritical' | 'supercritical' | null;
  receiverLevelWarning: string | null;
  /** Plain-words notes: a value outside the tables, a supercritical high side, a half-entered pair. */
  notes: string[];
}

const given = (v: number | null | undefined): v is number => typeof v === 'number' && Number.isFinite(v);

/** Warning text for a receiver level, %, above RECEIVER_LEVEL_MAX_PERCENT, else null. */
export function receiverLevelWarning(levelPercent: number | null | undefined): string | null {
  if (!given(levelPercent) || levelPercent <= RECEIVER_LEVEL_MAX_PERCENT) return null;
  return `Receiver level ${levelPercent.toFixed(0)} % is above the ${RECEIVER_LEVEL_MAX_PERCENT} % common-practice maximum: liquid may have no room to expand or to take a pump-down. Check the charge against the equipment maker's instructions.`;
}

function rangeNote(what: string, e: unknown): string {
  const supercritical = describeSupercriticalError(e);
  if (supercritical) return supercritical;
  if (e instanceof RangeError) return `${what} could not be computed: ${e.message}.`;
  throw e;
}

/**
 * Superheat (pressure method, dew point) and subcooling (bubble point) for a refrigerant at a site
 * elevation (m); a pair with only one value entered, or a value outside the tables, gives a note
 * instead of a number.
 */
export function computeChargingChecks(refrigerant: string, elevationM: number, input: ChargingCheckInput): ChargingCheckResult {
  const out: ChargingCheckResult = { saturatedSuctionC: null, superheatK: null, saturatedLiquidC: null, subcoolingK: null, highSideState: null, receiverLevelWarning: receiverLevelWarning(input.receiverLevelPercent), notes: [] };
  if (!isRefrigerantId(refrigerant)) {
    if (given(input.suctionKPaG) || given(input.liquidKPaG)) out.notes.push(`Rimehold has no tables for ${refrigerant}; superheat and subcooling were not computed.`);
    return out;
  }
  const id: RefrigerantId = refrigerant;
  if (given(input.suctionKPaG) !== given(input.suctionLineC)) out.notes.push('Superheat needs both the suction pressure and the suction-line temperature.');
  else if (given(input.suctionKPaG) && given(input.suctionLineC)) {
    try {
      const sh = superheatByPressureK({ refrigerant: id, suctionKPaG: input.suctionKPaG, suctionLineC: input.suctionLineC, elevationM });
      out.saturatedSuctionC = sh.saturatedSuctionC;
      out.superheatK = sh.superheatK;
    } catch (e) {
      out.notes.push(rangeNote('Superheat', e));
    }
  }
  if (given(input.liquidKPaG) !== given(input.liquidLineC)) out.notes.push('Subcooling needs both the liquid-line pressure and the liquid-line temperature.');
  else if (given(input.liquidKPaG) && given(input.liquidLineC)) {
    try {
      const hs = highSideReading({ refrigerant: id, highSideKPaG: input.liquidKPaG, outletC: input.liquidLineC, ambientC: null, elevationM });
      out.highSideState = hs.state;
      if (hs.state === 'subcritical') {
        out.saturatedLiquidC = hs.saturatedC;
        out.subcoolingK = hs.subcoolingK;
      } else out.notes.push('The high side is above the critical pressure: there is no condensing and so no subcooling.');
    } catch (e) {
      if (!(e instanceof RefrigerantRangeError) && !(e instanceof RangeError)) throw e;
      out.notes.push(rangeNote('Subcooling', e));
    }
  }
  return out;
}
