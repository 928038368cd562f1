/**
 * Physics of one box for one step: air and product nodes, coil metal and frost, low-side pressure,
 * suction line and liquid line. Explicit Euler with first-order lags; dt ≤ 2 s.
 */
import type { BoxModel } from './box';
import { coilInletC, evaporatorTargetKPaAbs, meanCoilC, superheatFromDryFraction } from './evaporator';
import {
  DOOR_AJAR_FRACTION,
  ICED_COIL_BLOCKED_FRACTION,
  ICED_COIL_BUILD_S,
  LEAK_THROUGH_FRACTION,
  LOW_CHARGE_LIQUID_FRACTION,
  LOW_CHARGE_SUBCOOLING_K,
} from './faults';
import type { Delivery } from './schedule';
import { ambientC } from './schedule';

/** Refrigerant-side (boiling) conductance as a multiple of the air side: boiling coefficients are far higher than air-side ones (our choice). */
const REFRIGERANT_SIDE_UA_RATIO = 4;
/** Most liquid the coil holds, as seconds of rated capacity (~0.5 kg in a small unit cooler; our choice). */
const INVENTORY_RATED_S = 40;
/** Latent heat of fusion of water, J/kg (general physics reference). */
const LATENT_FUSION_J_PER_KG = 334_000;
/** Time constants, s (our choices, of the order a technician sees on gauges). */
const TAU = {
  runKPa: 20, // low side settling while the valve feeds
  inventory: 25, // coil liquid boiling off after a start or during pump-down
  equaliseKPa: 15, // valve open, compressor off: coil pressure follows coil temperature
  leakKPa: 90, // liquid passing a leaking seat
  creepKPa: 600, // tight valve after pump-down
  suctionLine: 30, // thermistor on the suction line plus vapour transport
  suctionLineOff: 240,
  coilSensor: 10,
  condensing: 60,
  liquidLine: 60,
} as const;

/** Controller outputs the physics needs beyond what the model exposes. */
export interface ControlOutputs {
  heat: boolean;
  fansMoveAir: boolean;
}

/** The true physical state (no sensor noise). */
export class PhysicalState {
  airC: number;
  productC: number;
  /** Coil metal and fins, °C. */
  coilC: number;
  /** What the coil-inlet thermistor senses (before noise), °C. */
  coilInletC: number;
  ambientC: number;
  frostKg = 0;
  /** Fraction of the coil air path blocked by an iced-coil fault. */
  iceBlockedFraction = 0;
  suctionKPaAbs: number;
  /** Liquid refrigerant in the coil as latent heat, J. */
  inventoryJ = 0;
  suctionLineC: number;
  condensingC: number;
  liquidKPaAbs = 0;
  liquidLineC: number;
  doorOpen = false;
  /** Heat the coil took from the air in the last step, W (negative when the coil warms the air). */
  coilFromAirW = 0;

  constructor(startC: number, ambient: number, suctionKPaAbs: number) {
    this.airC = startC;
    this.productC = startC;
    this.coilC = startC;
    this.coilInletC = startC;
    this.ambientC = ambient;
    this.suctionKPaAbs = suctionKPaAbs;
    this.suctionLineC = startC;
    this.condensingC = ambient + 1;
    this.liquidLineC = ambient;
  }

  /** Air leaving the coil, °C: most of the way from box air to coil temperature. */
  dischargeAirC(fansMoveAir: boolean): number {
    const effectiveness = fansMoveAir ? 0.6 : 0.9;
    return this.airC - effectiveness * (this.airC - this.coilC);
  }
}

function lag(x: number, target: number, dtS: number, tauS: number): number {
  return x + (target - x) * Math.min(1, dtS / tauS);
}

/** Advances the physical state of `box` by dtS. */
export function stepPhysics(
  box: BoxModel,
  out: ControlOutputs,
  dtS: number,
  hour: number,
  delivery: Delivery | null,
  scheduledDoorOpen: boolean,
  feedJitter: number,
): void {
  const p = box.params;
  const s = box.phys;
  const fluid = box.fluid;
  const faults = box.faults;
  // Most steps run with no fault at all: one size test instead of a lookup per fault.
  const anyFault = faults.size > 0;
  s.ambientC = ambientC(p.ambientMeanC, p.ambientSwingK, hour);

  // Door: the schedule, or held ajar by a fault.
  const ajar = anyFault && faults.has('door-ajar');
  s.doorOpen = scheduledDoorOpen || ajar;
  const doorFraction = scheduledDoorOpen ? 1 : ajar ? DOOR_AJAR_FRACTION : 0;

  // Coil conductances: air side (fans, frost, ice) and refrigerant side (tubes, always clean).
  const iced = anyFault ? faults.get('iced-coil') : undefined;
  s.iceBlockedFraction = iced ? ICED_COIL_BLOCKED_FRACTION * Math.min(1, (box.tS - iced.sinceS) / ICED_COIL_BUILD_S) : 0;
  const airflow = out.fansMoveAir ? 1 : p.naturalConvectionFraction;
  const uaAirWPerK = (p.coilUAWPerK * airflow * (1 - s.iceBlockedFraction)) / (1 + s.frostKg / p.frostHalfKg);
  const uaRefWPerK = REFRIGERANT_SIDE_UA_RATIO * p.coilUAWPerK;

  // Valve feed, W of refrigerating effect: opening × capacity × liquid available × √(ΔP / design ΔP).
  const lowCharge = anyFault && faults.has('low-charge');
  const liquid = lowCharge ? LOW_CHARGE_LIQUID_FRACTION : 1;
  const dpFactor = Math.sqrt(Math.max(0, s.liquidKPaAbs - s.suctionKPaAbs) / box.designValveDeltaKPa);
  const leakW = anyFault && faults.has('valve-leak-through') ? LEAK_THROUGH_FRACTION * p.compressorRatedW * dpFactor : 0;
  const feedOpen = box.feedOpen;
  const valveFraction = box.valveFraction;
  const openW = feedOpen ? valveFraction * p.compressorRatedW * p.valveCapacityRatio * liquid * dpFactor * feedJitter : 0;
  const valveW = openW + leakW;
  // Liquid held in the coil: it fills while the valve passes liquid with the compressor stopped and
  // boils off once it runs (this is what carries a start and makes a pump-down take a minute).
  const inventoryMaxJ = INVENTORY_RATED_S * p.compressorRatedW;
  let feedW = valveW;
  if (box.compressorOn) {
    const releaseW = s.inventoryJ / TAU.inventory;
    s.inventoryJ = Math.max(0, s.inventoryJ - releaseW * dtS);
    feedW += releaseW;
  } else {
    s.inventoryJ = Math.min(inventoryMaxJ, s.inventoryJ + valveW * dtS);
  }
  const refrigerating = box.compressorOn && feedW > 20;

  // Low-side pressure.
  if (box.compressorOn) {
    // Running: the compressor sets the low side; in a pump-down only the coil's inventory still feeds it.
    const targetKPaAbs = evaporatorTargetKPaAbs(fluid, s.coilC, uaRefWPerK, feedW, p.compressorRatedW, box.ratedSuctionKPaAbs);
    s.suctionKPaAbs = lag(s.suctionKPaAbs, targetKPaAbs, dtS, TAU.runKPa);
  } else {
    const pKPa = s.suctionKPaAbs;
    const equalKPa = fluid.dewKPaAbs(s.coilC);
    let next = pKPa;
    if (feedOpen && valveFraction > 0.01) next = lag(next, equalKPa, dtS, TAU.equaliseKPa);
    else if (pKPa > equalKPa) next = lag(next, equalKPa, dtS, TAU.equaliseKPa * 4);
    else next = lag(next, Math.min(equalKPa, Math.max(pKPa, box.creepKPaAbs())), dtS, TAU.creepKPa);
    if (leakW > 0) next += (equalKPa - pKPa) * Math.min(1, dtS / TAU.leakKPa);
    s.suctionKPaAbs = Math.max(fluid.minKPaAbs * 1.02, next);
  }

  // Refrigerant boiling against the coil metal, and the suction line it leaves by.
  const heaterWorks = !(anyFault && faults.has('defrost-heater-failed'));
  const pKPa = s.suctionKPaAbs;
  const dewC = fluid.dewC(pKPa);
  let refW = 0;
  if (refrigerating) {
    const potentialW = uaRefWPerK * Math.max(0, s.coilC - meanCoilC(fluid, pKPa));
    const compressorW = (p.compressorRatedW * pKPa) / box.ratedSuctionKPaAbs;
    refW = Math.min(compressorW, potentialW);
    // Superheat at the present pressure: the coil's dry fraction is what the feed leaves unwetted.
    const dry = potentialW > feedW ? 1 - feedW / potentialW : 0;
    const spanK = Math.max(s.airC, s.coilC) - dewC;
    s.suctionLineC = lag(s.suctionLineC, dewC + superheatFromDryFraction(spanK, dry), dtS, TAU.suctionLine);
  } else {
    const heating = heaterWorks && out.heat;
    // Pump-down: vapour still flows past the cold coil; stopped: the line settles toward box air.
    const lineTarget = box.compressorOn ? Math.max(dewC, s.coilC) : heating ? 0.5 * (s.coilC + s.airC) : s.airC;
    s.suctionLineC = lag(s.suctionLineC, lineTarget, dtS, box.compressorOn ? TAU.suctionLine : TAU.suctionLineOff);
  }

  // Coil metal: air, heaters, boiling refrigerant; frost holds it at 0 °C while it melts.
  const heaterW = out.heat && heaterWorks ? p.defrostHeatW : 0;
  const airToCoilW = uaAirWPerK * (s.airC - s.coilC);
  const netW = airToCoilW + heaterW - refW;
  const coilJPerK = p.coilMassKJPerK * 1000;
  if (s.frostKg > 0 && s.coilC >= -1e-9 && netW > 0) {
    const meltKg = Math.min(s.frostKg, (netW * dtS) / LATENT_FUSION_J_PER_KG);
    s.frostKg -= meltKg;
    s.coilC = 0 + (netW * dtS - meltKg * LATENT_FUSION_J_PER_KG) / coilJPerK;
  } else {
    const nextC = s.coilC + (netW * dtS) / coilJPerK;
    s.coilC = s.frostKg > 0 && s.coilC < 0 && nextC > 0 ? 0 : nextC;
  }
  if (refrigerating && s.coilC < 0) {
    const infiltrationKgPerS = (p.doorOpenUAWPerK * doorFraction) / 1000; // cp of air ≈ 1 kJ/(kg·K)
    s.frostKg += (p.frostBaseKgPerH / 3600 + infiltrationKgPerS * p.infiltrationMoistureKgPerKg) * dtS;
  }
  // The coil-inlet thermistor is clamped to the tube after the distributor: refrigerant temperature
  // while liquid is fed, metal temperature otherwise.
  const inletTarget = refrigerating ? coilInletC(fluid, pKPa) : s.coilC;
  s.coilInletC = lag(s.coilInletC, inletTarget, dtS, TAU.coilSensor);
  const coilToAirW = -airToCoilW;
  s.coilFromAirW = airToCoilW;

  // Air and product nodes.
  const envelopeW = p.envelopeUAWPerK * (s.ambientC - s.airC);
  const doorW = p.doorOpenUAWPerK * doorFraction * (s.ambientC - s.airC);
  const productW = p.airProductUAWPerK * (s.productC - s.airC);
  const fanW = out.fansMoveAir ? p.fanHeatW : 0;
  s.airC += ((envelopeW + doorW + productW + fanW + coilToAirW) * dtS) / (p.airMassKJPerK * 1000);
  s.productC -= (productW * dtS) / (p.productMassKJPerK * 1000);
  if (delivery) {
    // Stock rotation: the delivery replaces the same mass of stored product.
    const cpKJPerKgK = p.kind === 'freezer' ? 2 : 3.5;
    const share = Math.min(0.5, (delivery.massKg * cpKJPerKgK) / p.productMassKJPerK);
    s.productC += share * (s.airC + delivery.warmK - s.productC);
  }

  // Liquid line: condensing above ambient while running, settling to ambient when stopped. An
  // air-cooled condenser keeps roughly its temperature difference as the air warms, so a 40 °C day
  // gives about 52 °C condensing (common practice: 10-15 K over ambient). The tables now reach a few K
  // below the critical point (≥ 66 °C for every refrigerant the model runs), so hot-day heads are
  // modelled as they are; only beyond the table end is the head held there (a real system would be at
  // its high-pressure cut-out by then).
  const condTargetC = box.compressorOn ? s.ambientC + p.condensingAboveAmbientK : s.ambientC + 1;
  s.condensingC = lag(s.condensingC, condTargetC, dtS, TAU.condensing);
  const condC = Math.min(s.condensingC, fluid.maxC);
  s.liquidKPaAbs = fluid.bubbleKPaAbs(condC);
  const subcoolK = lowCharge ? LOW_CHARGE_SUBCOOLING_K : p.subcoolingK;
  s.liquidLineC = lag(s.liquidLineC, box.compressorOn ? condC - subcoolK : s.ambientC, dtS, TAU.liquidLine);
}
