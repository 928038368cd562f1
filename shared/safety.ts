// The standard caution texts Rimehold shows. Screens use these as they are; do not re-word them
// elsewhere. They defer to local codes, the equipment maker's instructions and certified practice.
import { getRefrigerant, type RefrigerantId } from './refrigerants/index';

export type CautionKey =
  | 'flammable'
  | 'highPressure'
  | 'toxic'
  | 'refrigerantHandling'
  | 'electrical'
  | 'foodSafety'
  | 'notADiagnosis'
  | 'leakRateAid';

export interface Caution {
  readonly key: CautionKey;
  readonly title: string;
  readonly text: string;
}

/** Every standard caution, keyed by the situation it applies to. */
export const CAUTIONS: Readonly<Record<CautionKey, Caution>> = Object.freeze({
  flammable: {
    key: 'flammable',
    title: 'Flammable refrigerant',
    text:
      'This refrigerant is flammable (ASHRAE 34 class A2L, B2L or A3). Use it only in equipment listed ' +
      'for it, never as a replacement in equipment that is not. Keep every ignition source away from ' +
      'the work, use tools and recovery equipment rated for flammable refrigerants, and follow local ' +
      "codes and the equipment maker's instructions.",
  },
  highPressure: {
    key: 'highPressure',
    title: 'High-pressure refrigerant (R-744, CO₂)',
    text:
      'CO₂ systems run at very high pressures, and while a system stands still its pressure can rise ' +
      'above what the low side is rated for. Below the triple point, about 5.2 bar absolute (roughly ' +
      '60 psig), liquid CO₂ turns to dry ice that can block lines and relief valves: do not charge ' +
      'liquid into a system below that pressure. CO₂ is heavier than air and can suffocate; rooms ' +
      "need working leak detection and alarms. Follow the maker's instructions and local codes.",
  },
  toxic: {
    key: 'toxic',
    title: 'Toxic refrigerant',
    text:
      'This refrigerant is toxic (ASHRAE 34 class B). Work only under the site’s written safety ' +
      'procedures for it, with working leak detection, ventilation and the protective equipment those ' +
      'procedures require.',
  },
  refrigerantHandling: {
    key: 'refrigerantHandling',
    title: 'Refrigerant handling',
    text:
      'Only certified technicians may handle refrigerant. Never vent it: recover it before the system ' +
      'is opened. Charge blends as liquid so that their composition does not change. Liquid refrigerant ' +
      'causes frostbite, and the vapour is heavier than air and can push oxygen out of an enclosed space.',
  },
  electrical: {
    key: 'electrical',
    title: 'Electrical isolation',
    text:
      'Lock out and tag out the condensing unit, evaporator fans, defrost heaters and controls, and ' +
      'prove them dead before any service. A remote command or a monitoring reading is never isolation. ' +
      'Fans and defrost heaters can start by themselves on timers.',
  },
  foodSafety: {
    key: 'foodSafety',
    title: 'Food safety',
    text:
      'Box air temperature is not product temperature. Before keeping or discarding food after a ' +
      'temperature problem, check the product itself with a calibrated probe thermometer and follow ' +
      'your local health authority’s rules.',
  },
  notADiagnosis: {
    key: 'notADiagnosis',
    title: 'Not a diagnosis',
    text:
      "Rimehold's readings and calculations support a trained technician's judgement. They are not a " +
      'diagnosis, a charging instruction or a compliance finding; local codes, the equipment maker’s ' +
      'instructions and certified practice come first.',
  },
  leakRateAid: {
    key: 'leakRateAid',
    title: 'Leak rate: an aid, not a compliance finding',
    text:
      'The leak rate, threshold and repair deadline shown here are computed from the entries in this log ' +
      'as an aid to record keeping. Whether a leak-repair rule applies depends on the refrigerant, the ' +
      'full charge and the rules in force; the applicable regulations and a certified technician decide, ' +
      'and the owner or operator remains responsible for the required records and repairs.',
  },
});

/** The cautions that apply to work on a refrigerant, most severe first (throws UnknownRefrigerantError). */
export function cautionsForRefrigerant(id: RefrigerantId): Caution[] {
  const info = getRefrigerant(id);
  const list: Caution[] = [];
  if (info.highPressure) list.push(CAUTIONS.highPressure);
  if (info.safetyClass.startsWith('B')) list.push(CAUTIONS.toxic);
  if (info.flammable) list.push(CAUTIONS.flammable);
  list.push(CAUTIONS.refrigerantHandling, CAUTIONS.notADiagnosis);
  return list;
}
