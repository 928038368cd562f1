/**
 * Quasi-static evaporator: where the low side settles for a given valve feed, coil conductance and
 * box air temperature. The box model lets its pressure and suction-line states approach these
 * targets with time constants, so the loop dynamics still show.
 *
 * Mass balance: at steady state the compressor removes exactly the vapour the valve feeds. The
 * compressor's mass flow is proportional to suction vapour density, which for a fixed superheat is
 * close to proportional to absolute suction pressure (ideal gas), so
 *   Q_comp(P) = ratedW · P / P_rated.
 * Heat balance: the wetted part of the tubes boils the feed, Q = UA · w · (T_metal − T_mean), where w
 * is the wetted fraction, T_metal the coil metal temperature and T_mean the mid-point of dew and
 * bubble (TRADE-NOTES §3: mid-point for the evaporator TD). The dry remainder superheats the vapour.
 */
import type { Fluid } from './fluid';

/** Number of transfer units of the gas-side (superheating) part of the coil when it is all dry. */
export const SUPERHEAT_NTU = 4;
/** Vapour sensible heat per kelvin of superheat as a fraction of latent heat (cp ≈ 0.9 kJ/(kg·K), h_fg ≈ 180 kJ/kg). */
const SENSIBLE_PER_K = 0.005;

export interface EvaporatorInput {
  fluid: Fluid;
  /** Coil metal temperature, the heat source of the boiling refrigerant, °C. */
  sourceC: number;
  /** Refrigerant-side conductance of the tubes, W/K. */
  uaWPerK: number;
  /** Refrigerating effect the valve feeds, W (latent heat of the liquid it passes). */
  feedW: number;
  compressorRatedW: number;
  ratedKPaAbs: number;
}

export interface EvaporatorState {
  /** Suction pressure the low side settles at, kPa abs. */
  targetKPaAbs: number;
  /** Evaporator-outlet superheat, K (0 when liquid floods back). */
  superheatK: number;
  /** Heat the refrigerant takes from the coil metal, W. */
  fromCoilW: number;
  /** True when the coil cannot boil all the feed (floodback). */
  flooded: boolean;
}

/** Mid-point refrigerant temperature in the coil at an absolute pressure, °C. */
export function meanCoilC(fluid: Fluid, kPaAbs: number): number {
  return 0.5 * (fluid.dewC(kPaAbs) + fluid.bubbleC(kPaAbs));
}

/** Refrigerant temperature at the coil inlet, °C: just past the valve the mix is mostly liquid, so near the bubble point (a quarter of the way to dew). */
export function coilInletC(fluid: Fluid, kPaAbs: number): number {
  const bubble = fluid.bubbleC(kPaAbs);
  return bubble + 0.25 * (fluid.dewC(kPaAbs) - bubble);
}

/** Superheat from the dry fraction of the coil, K, given the air-to-dew span in K. */
export function superheatFromDryFraction(spanK: number, dryFraction: number): number {
  return Math.max(0, spanK) * (1 - Math.exp(-SUPERHEAT_NTU * Math.max(0, Math.min(1, dryFraction))));
}

/** Steady low side for the input (pressure target, superheat, heat from air). */
export function solveEvaporator(input: EvaporatorInput): EvaporatorState {
  const { fluid, sourceC, uaWPerK, compressorRatedW, ratedKPaAbs } = input;
  const floorKPa = fluid.minKPaAbs * 1.02;
  const feedW = Math.max(0, input.feedW);
  const feedKPa = Math.max(floorKPa, (ratedKPaAbs * feedW) / compressorRatedW);
  const span = sourceC - fluid.dewC(feedKPa);
  const potentialW = uaWPerK * Math.max(0, sourceC - meanCoilC(fluid, feedKPa));
  if (feedW <= 0) return { targetKPaAbs: floorKPa, superheatK: superheatFromDryFraction(span, 1), fromCoilW: 0, flooded: false };
  if (potentialW > feedW) {
    const dry = 1 - feedW / potentialW;
    const sh = superheatFromDryFraction(span, dry);
    return { targetKPaAbs: feedKPa, superheatK: sh, fromCoilW: feedW * (1 + SENSIBLE_PER_K * sh), flooded: false };
  }
  const p = floodedKPaAbs(fluid, sourceC, uaWPerK, compressorRatedW, ratedKPaAbs, floorKPa, feedKPa);
  return { targetKPaAbs: p, superheatK: 0, fromCoilW: (compressorRatedW * p) / ratedKPaAbs, flooded: true };
}

/**
 * The suction pressure solveEvaporator settles at, kPa abs, without the rest of its answer: the
 * same arithmetic in the same order (so the same number), but no objects and no superheat, for the
 * model's step, which needs only the pressure.
 */
export function evaporatorTargetKPaAbs(fluid: Fluid, sourceC: number, uaWPerK: number, feedWIn: number, compressorRatedW: number, ratedKPaAbs: number): number {
  const floorKPa = fluid.minKPaAbs * 1.02;
  const feedW = Math.max(0, feedWIn);
  if (feedW <= 0) return floorKPa;
  const feedKPa = Math.max(floorKPa, (ratedKPaAbs * feedW) / compressorRatedW);
  const potentialW = uaWPerK * Math.max(0, sourceC - meanCoilC(fluid, feedKPa));
  if (potentialW > feedW) return feedKPa;
  return floodedKPaAbs(fluid, sourceC, uaWPerK, compressorRatedW, ratedKPaAbs, floorKPa, feedKPa);
}

/**
 * Flooded: the coil, not the valve, limits. Bisects (40 halvings) for P, kPa abs, where compressor
 * flow = UA · (T_metal − T_mean(P)).
 *
 * Speed without changing the answer: the excess of compressor flow over what the coil boils rises
 * with P (the flow rises, the coil's pull falls as T_mean rises), so a halving point at or above a
 * point already found in excess is in excess too, and one at or below a point found short is short.
 * A few regula-falsi (Illinois) evaluations first pin the root between two such points; the
 * bisection then takes the same 40 decisions, evaluating only the points that fall between them.
 */
function floodedKPaAbs(fluid: Fluid, sourceC: number, uaWPerK: number, compressorRatedW: number, ratedKPaAbs: number, floorKPa: number, feedKPa: number): number {
  const excessW = (p: number): number => (compressorRatedW * p) / ratedKPaAbs - uaWPerK * Math.max(0, sourceC - meanCoilC(fluid, p));
  let lo = floorKPa;
  let hi = Math.max(feedKPa, floorKPa * 1.01);
  // Highest point known short (excess ≤ 0) and lowest point known in excess (> 0).
  let shortKPa = -Infinity;
  let excessKPa = Infinity;
  let a = lo;
  let fa = excessW(a);
  let b = hi;
  let fb = excessW(b);
  if (fa > 0) excessKPa = a;
  else shortKPa = a;
  if (fb > 0) excessKPa = Math.min(excessKPa, b);
  else shortKPa = Math.max(shortKPa, b);
  if (fa <= 0 && fb > 0) {
    let side = 0;
    for (let i = 0; i < PRESOLVE_EVALUATIONS; i++) {
      const c = (a * fb - b * fa) / (fb - fa);
      if (!(c > a && c < b)) break;
      const fc = excessW(c);
      if (fc > 0) {
        b = c;
        fb = fc;
        excessKPa = c;
        if (side === -1) fa *= 0.5;
        side = -1;
      } else {
        a = c;
        fa = fc;
        shortKPa = c;
        if (side === 1) fb *= 0.5;
        side = 1;
      }
    }
  }
  for (let i = 0; i < 40; i++) {
    const mid = 0.5 * (lo + hi);
    if (mid >= excessKPa) hi = mid;
    else if (mid <= shortKPa) lo = mid;
    else if (excessW(mid) > 0) {
      hi = mid;
      excessKPa = mid;
    } else {
      lo = mid;
      shortKPa = mid;
    }
  }
  return 0.5 * (lo + hi);
}

/** Regula-falsi evaluations before the bisection (a handful brings the bracket near rounding level). */
const PRESOLVE_EVALUATIONS = 8;
