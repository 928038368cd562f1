/**
 * Words for the demo fault panel: a plain name for each simulated fault and the trend a technician
 * would expect to see once it is on. The signatures follow what the simulator models
 * (simulator/README.md, "Faults and their signatures"); they describe the demo, not a diagnosis.
 */
import { FAULT_NAMES, THERMISTOR_NAMES, type FaultName, type ThermistorName } from '@shared/schemas/demo';

export interface FaultWords {
  label: string;
  /** One line: the trend signature to look for. */
  hint: string;
  /** The fault hits one thermistor, chosen in the panel. */
  needsSensor: boolean;
}

export const FAULT_WORDS: Readonly<Record<FaultName, FaultWords>> = {
  'low-charge': {
    label: 'Short of refrigerant',
    hint: 'Superheat high, valve near fully open, suction pressure low, long runs (a freezer may short-cycle on the low-pressure switch instead).',
    needsSensor: false,
  },
  'iced-coil': {
    label: 'Iced-up evaporator coil',
    hint: 'Suction pressure and coil temperature fall, the valve throttles back, box air creeps up over long runs.',
    needsSensor: false,
  },
  'evap-fan-failed': {
    label: 'Evaporator fans move no air',
    hint: 'Reads like an iced coil (suction low, valve throttling, box air rising) while the fan output still shows on.',
    needsSensor: false,
  },
  'defrost-heater-failed': {
    label: 'Defrost heaters dead',
    hint: 'The coil never warms past freezing in defrost, defrost ends on its time limit, pull-down gets longer each cycle.',
    needsSensor: false,
  },
  'door-ajar': {
    label: 'Door left ajar',
    hint: 'Door switch reads open, box air climbs fast, the compressor runs without a break, the coil frosts up.',
    needsSensor: false,
  },
  'thermistor-open': {
    label: 'Sensor circuit open',
    hint: 'The chosen sensor reads off the bottom of its scale; the controller falls back to a fixed valve opening or timed runs.',
    needsSensor: true,
  },
  'thermistor-shorted': {
    label: 'Sensor shorted',
    hint: 'The chosen sensor reads off the top of its scale; the controller falls back as for an open sensor.',
    needsSensor: true,
  },
  'sensor-stuck': {
    label: 'Sensor stuck',
    hint: 'The chosen sensor keeps reporting the value it had when the fault began, while the system around it keeps cycling.',
    needsSensor: true,
  },
  'sensor-drift': {
    label: 'Sensor drifting',
    hint: 'The chosen sensor reads higher and higher than the truth (0.5 K more each hour, up to 8 K); the controller acts on the wrong figure.',
    needsSensor: true,
  },
  'valve-leak-through': {
    label: 'Valve passes when closed',
    hint: 'Suction pressure climbs quickly after the compressor stops and it restarts on pressure with no call for cooling: many starts.',
    needsSensor: false,
  },
  'valve-leak-through-severe': {
    label: 'Valve passes badly when closed',
    hint: 'Liquid keeps feeding the coil when the valve should be shut: pump-down never reaches the low-pressure cut-out and ends on its time limit every time.',
    needsSensor: false,
  },
  'short-cycling': {
    label: 'Short cycling',
    hint: 'Far more compressor starts per hour than normal, each run short.',
    needsSensor: false,
  },
  offline: {
    label: 'Controller drops off the network',
    hint: 'The box shows offline; readings wait on the controller and arrive in order once it reconnects.',
    needsSensor: false,
  },
};

/** Names for the thermistor inputs a sensor fault can hit. */
export const THERMISTOR_WORDS: Readonly<Record<ThermistorName, string>> = {
  boxAirC: 'Box air',
  suctionLineC: 'Suction line',
  coilInletC: 'Coil inlet',
  dischargeAirC: 'Discharge air',
  liquidLineC: 'Liquid line',
};

/** The simulator's default thermistor for a sensor fault (simulator/model/faults.ts): the suction line. */
export const DEFAULT_FAULT_SENSOR: ThermistorName = 'suctionLineC';

/** Fault names in panel order (the shared list's order). */
export const FAULT_ORDER: readonly FaultName[] = FAULT_NAMES;
export const THERMISTOR_ORDER: readonly ThermistorName[] = THERMISTOR_NAMES;
