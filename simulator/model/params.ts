/**
 * The parameters of one simulated walk-in box, with the reason each default is plausible.
 * Values marked "common practice" are trade rules of thumb without a single source; values marked
 * "from memory" were recalled, not checked; "TRADE-NOTES §n" points at /work/shared/TRADE-NOTES.md.
 */
import type { BoxKind, DefrostType, ValveType } from '../../shared/domain';
import { DEFAULT_VALVE_FULL_STEPS } from '../../shared/domain';
import type { RefrigerantId } from './fluid';

/** Settings a technician can change from the server (config/set). */
export interface BoxSettings {
  refrigerant: RefrigerantId;
  /** Box air cut-out temperature, °C; the compressor call ends here. */
  setpointC: number;
  /** Cut-in = setpoint + differential, K. */
  differentialK: number;
  /** EEV superheat target, K (for a TXV box: where its static superheat spring was set). */
  superheatTargetK: number;
  defrostType: DefrostType;
  defrostIntervalH: number;
  /** Defrost time limit (fail-safe), min. */
  defrostMaxMin: number;
  /** Coil temperature that ends a heated defrost, °C. */
  defrostTerminationC: number;
  dripMin: number;
  /** Longest fan delay after drip, min; the fans start earlier once the coil is cold again. */
  fanDelayMin: number;
}

/** Everything that describes one box, its refrigeration system and its use. */
export interface BoxModelParams extends BoxSettings {
  kind: BoxKind;
  valveType: ValveType;
  /** Which defrost the hardware can do besides off-cycle (a heater or a hot-gas line fitted). */
  defrostHardware: 'none' | 'electric' | 'hot-gas';
  valveFullSteps: number;
  /** Site elevation, m. The simulated transducers are vented gauges: they read against the site's standard atmosphere (gaugeReference 'vented-gauge', docs/device-protocol.md). */
  elevationM: number;
  /** Epoch ms of simulated t = 0 (only for hour-of-day schedules; the model never reads a clock). */
  startEpochMs: number;

  // --- box envelope -------------------------------------------------------------------------
  /** Air, shelving and inner skins that follow the air quickly, kJ/K. ~40 m³ air (48 kJ/K) plus ~200 kg of steel/aluminium. */
  airMassKJPerK: number;
  /** Stored product, kJ/K. ~500 kg of food at ~3.5 kJ/(kg·K) for a cooler (common practice). */
  productMassKJPerK: number;
  /** Air ↔ product coupling, W/K. Packed product warms or cools over hours, not minutes. */
  airProductUAWPerK: number;
  /** Walls, ceiling and floor to the kitchen, W/K. ~70 m² of 100 mm foam panel at U ≈ 0.3 W/(m²·K). */
  envelopeUAWPerK: number;
  /** Mean kitchen temperature, °C (brief: 24–30 °C), and its daily swing amplitude, K (peak mid-afternoon). */
  ambientMeanC: number;
  ambientSwingK: number;
  /** Air exchange through a fully open door expressed as W/K of (ambient − box). ~0.15 kg/s of air × 1 kJ/(kg·K). */
  doorOpenUAWPerK: number;
  /** Door openings per hour at the busiest hour (scaled by the kitchen profile in schedule.ts). */
  doorPeakPerH: number;
  /** Mean time a door stays open, s. */
  doorMeanOpenS: number;
  /** Moisture the infiltrating kitchen air leaves on the coil, kg water per kg air (~0.008 for 26 °C, 55 % RH air; psychrometric estimate). */
  infiltrationMoistureKgPerKg: number;
  /** Product deliveries per day and their size, kg, and how far above box air they arrive, K. */
  deliveriesPerDay: number;
  deliveryKgMax: number;
  deliveryWarmK: number;
  /** Fan motor heat when the fans run, W. */
  fanHeatW: number;

  // --- evaporator and compressor --------------------------------------------------------------
  /** Air-side coil conductance with fans and a clean coil, W/K. Chosen so design TD ≈ 5–7 K at rated load (TRADE-NOTES §2: coil TD ~10 °F for coolers). */
  coilUAWPerK: number;
  /** Fraction of coil conductance left by natural convection when the fans stop. */
  naturalConvectionFraction: number;
  /** Coil metal + fins, kJ/K (~20 kg aluminium/copper). */
  coilMassKJPerK: number;
  /** Frost mass that halves the coil conductance, kg. */
  frostHalfKg: number;
  /** Frost laid on a running coil even with the door shut (product moisture, gasket leaks), kg/h. */
  frostBaseKgPerH: number;
  /** Compressor capacity at the rated evaporating temperature, W. */
  compressorRatedW: number;
  /** Rated evaporating (dew) temperature, °C; capacity scales with suction pressure (mass flow ∝ vapour density). */
  ratedEvaporatingC: number;
  /** What the valve passes fully open with a full liquid line, as a multiple of compressor capacity (valves are sized with margin, common practice). */
  valveCapacityRatio: number;
  /** Condensing temperature above ambient, K (brief: 10–15 K), and liquid subcooling, K. */
  condensingAboveAmbientK: number;
  subcoolingK: number;

  // --- controls -------------------------------------------------------------------------------
  /** Anti-short-cycle minimum off and on times, s (TRADE-NOTES §2: 3–5 min off; 2.5 min on in one service manual). */
  minOffS: number;
  minOnS: number;
  /** Low-pressure cut-out ending pump-down, kPa(g). Coolers: 55 kPa(g) ≈ 8 psig, inside the 5–10 psig of TRADE-NOTES §2 (ACHR 142618). */
  lpCutOutKPaG: number;
  /** The low-pressure switch closes again at saturation this far below the setpoint, K (never below cut-out + lpMinDifferentialKPa). */
  lpCutInBelowSetpointK: number;
  lpMinDifferentialKPa: number;
  /** Pump-down that has not reached the cut-out by this time stops anyway, s (common practice safety). */
  pumpDownMaxS: number;
  /** Fans restart after a heated defrost once the coil is this cold, °C (TRADE-NOTES §2: −4 °C in one manual). */
  fanStartCoilC: number;
  /** Heater power for electric defrost, or equivalent heat of hot gas, W. */
  defrostHeatW: number;
  /** EEV PI gains: fraction of full travel per K of superheat error, and integral time, s. */
  eevKpPerK: number;
  eevTiS: number;
  /** Step-rate limit of the valve motor, steps/s (a slow rate keeps the loop calm; common practice). */
  eevMaxStepsPerS: number;
  /** Opening the EEV goes to when a run starts, before the PI loop takes over, fraction of travel. */
  eevStartFraction: number;
  eevStartHoldS: number;
  /** Opening used while the superheat cannot be measured (a thermistor or transducer fault), fraction. */
  eevFallbackFraction: number;
  /** TXV: superheat change from closed to fully open, K, and bulb time constant, s. */
  txvGradientK: number;
  txvBulbTauS: number;
  /** Sensor noise (1 σ), K and kPa, before quantisation to 0.1 °C and 1 kPa. */
  tempNoiseSdK: number;
  pressureNoiseSdKPa: number;
}

/** Fields a fleet entry (or a test) supplies; everything else has a default by kind. */
export type BoxIdentity = Pick<BoxModelParams, 'kind' | 'valveType' | 'refrigerant' | 'startEpochMs'> &
  Partial<Omit<BoxModelParams, 'kind' | 'valveType' | 'refrigerant' | 'startEpochMs'>>;

const COMMON = {
  valveFullSteps: DEFAULT_VALVE_FULL_STEPS, // 1,600 steps: TRADE-NOTES §3 typical full stroke (from memory)
  elevationM: 0,
  ambientMeanC: 26,
  ambientSwingK: 2,
  doorOpenUAWPerK: 150,
  doorMeanOpenS: 15,
  infiltrationMoistureKgPerKg: 0.008,
  deliveriesPerDay: 1.5,
  naturalConvectionFraction: 0.05,
  coilMassKJPerK: 18,
  frostHalfKg: 4,
  valveCapacityRatio: 2,
  condensingAboveAmbientK: 12,
  subcoolingK: 5,
  minOffS: 180, // 3 min: lower end of TRADE-NOTES §2 (from memory there)
  minOnS: 150, // 2.5 min: TRADE-NOTES §2 (ice/refrigeration service manual)
  lpMinDifferentialKPa: 40,
  pumpDownMaxS: 180,
  fanStartCoilC: -4,
  defrostHeatW: 2400,
  eevKpPerK: 0.04,
  eevTiS: 60,
  eevMaxStepsPerS: 30,
  eevStartFraction: 0.3,
  eevStartHoldS: 45,
  eevFallbackFraction: 0.35,
  txvGradientK: 4,
  txvBulbTauS: 60,
  tempNoiseSdK: 0.05,
  pressureNoiseSdKPa: 1,
} as const;

const COOLER = {
  setpointC: 2,
  differentialK: 2,
  superheatTargetK: 4, // EEV 2–4 K (TRADE-NOTES §3, from memory there)
  defrostType: 'off-cycle' as DefrostType, // TRADE-NOTES §2: off-cycle for medium temperature (ACHR 110983)
  defrostHardware: 'none' as const,
  defrostIntervalH: 6,
  defrostMaxMin: 30, // forced off-cycle adds 30–60 min (ACHR 110983); 30 min is the short end
  defrostTerminationC: 5,
  dripMin: 2,
  fanDelayMin: 0,
  airMassKJPerK: 400,
  productMassKJPerK: 1750,
  airProductUAWPerK: 120,
  envelopeUAWPerK: 22,
  doorPeakPerH: 16,
  deliveryKgMax: 120,
  deliveryWarmK: 6,
  fanHeatW: 120,
  coilUAWPerK: 600,
  frostBaseKgPerH: 0.05,
  compressorRatedW: 2600,
  ratedEvaporatingC: -6,
  lpCutOutKPaG: 55, // ≈ 8 psig, TRADE-NOTES §2 (ACHR 142618: 5–10 psig)
  lpCutInBelowSetpointK: 6,
};

const FREEZER = {
  setpointC: -20,
  differentialK: 2,
  superheatTargetK: 3,
  defrostType: 'electric' as DefrostType, // TRADE-NOTES §2 (hvacfun): freezers use electric or hot-gas defrost
  defrostHardware: 'electric' as const,
  defrostIntervalH: 6, // 4/day (TRADE-NOTES §2, walk-in I&O manual)
  defrostMaxMin: 40, // fail-safe 35–45 min (TRADE-NOTES §2, hvacfun)
  defrostTerminationC: 10, // ~50 °F coil (TRADE-NOTES §2, walk-in I&O manual)
  dripMin: 3,
  fanDelayMin: 5,
  airMassKJPerK: 300,
  productMassKJPerK: 1400, // ~700 kg frozen food at ~2 kJ/(kg·K)
  airProductUAWPerK: 90,
  coilMassKJPerK: 35, // a low-temperature coil has more rows and closer fins: ~40 kg of metal
  envelopeUAWPerK: 16, // 125–150 mm panels
  doorPeakPerH: 6,
  deliveryKgMax: 80,
  deliveryWarmK: 8,
  fanHeatW: 150,
  coilUAWPerK: 410, // design TD ≈ 7 K (TRADE-NOTES §2: 10–15 °F for freezers, from memory there)
  frostBaseKgPerH: 0.35,
  compressorRatedW: 2300,
  ratedEvaporatingC: -28, // ACHR 127265 in TRADE-NOTES §2: −10 °F box with about −24 °F evaporating
  lpCutOutKPaG: 14, // ≈ 2 psig: our choice for low temperature, below the cooler band so a freezer's normal suction never reaches it
  lpCutInBelowSetpointK: 6,
};

/** Full parameters for a box: the kind's defaults overlaid with what the caller gives. */
export function boxParams(identity: BoxIdentity): BoxModelParams {
  const byKind = identity.kind === 'freezer' ? FREEZER : COOLER;
  return {
    ...COMMON,
    ...byKind,
    ...stripUndefined(identity),
    kind: identity.kind,
    valveType: identity.valveType,
    refrigerant: identity.refrigerant,
    startEpochMs: identity.startEpochMs,
  };
}

function stripUndefined<T extends object>(o: T): Partial<T> {
  const out: Partial<T> = {};
  for (const [k, v] of Object.entries(o) as [keyof T, T[keyof T]][]) if (v !== undefined) out[k] = v;
  return out;
}
