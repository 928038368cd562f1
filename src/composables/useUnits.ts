/** The signed-in user's unit system with formatters and parsers bound to it. */
import { computed } from 'vue';
import {
  formatPressureGauge,
  formatTemperature,
  formatTemperatureDelta,
  formatLength,
  lengthForDisplay,
  lengthUnit,
  parseLengthM,
  parsePressureGaugeKPaG,
  parseTemperatureC,
  parseTemperatureDeltaK,
  pressureGaugeForDisplay,
  pressureGaugeUnit,
  temperatureDeltaForDisplay,
  temperatureDeltaUnit,
  temperatureForDisplay,
  temperatureUnit,
  type UnitSystem,
} from '@shared/field';
import { useSessionStore } from '@/stores/session';

export const UNIT_SYSTEM_LABELS: Record<UnitSystem, string> = {
  imperial: 'Imperial (°F, psig)',
  'metric-bar': 'Metric (°C, bar)',
  'metric-kpa': 'Metric (°C, kPa)',
};

/** Rounds for an editable field: temperatures 1 decimal, pressures per unit. */
export function roundForInput(v: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(v * f) / f;
}

export function useUnits() {
  const session = useSessionStore();
  const system = computed<UnitSystem>(() => session.unitSystem);
  return {
    system,
    tUnit: computed(() => temperatureUnit(system.value)),
    dUnit: computed(() => temperatureDeltaUnit(system.value)),
    pUnit: computed(() => pressureGaugeUnit(system.value)),
    lUnit: computed(() => lengthUnit(system.value)),
    pDigits: computed(() => (system.value === 'imperial' ? 1 : system.value === 'metric-bar' ? 2 : 0)),
    temp: (c: number | null | undefined, digits = 1) => (c === null || c === undefined ? '—' : formatTemperature(c, system.value, digits)),
    delta: (k: number | null | undefined, digits = 1) => (k === null || k === undefined ? '—' : formatTemperatureDelta(k, system.value, digits)),
    pressure: (kPaG: number | null | undefined, digits?: number) => (kPaG === null || kPaG === undefined ? '—' : formatPressureGauge(kPaG, system.value, digits)),
    length: (m: number | null | undefined, digits = 0) => (m === null || m === undefined ? '—' : formatLength(m, system.value, digits)),
    lengthValue: (m: number) => lengthForDisplay(m, system.value),
    tempValue: (c: number) => temperatureForDisplay(c, system.value),
    deltaValue: (k: number) => temperatureDeltaForDisplay(k, system.value),
    pressureValue: (kPaG: number) => pressureGaugeForDisplay(kPaG, system.value),
    parseTemp: (s: string | number) => parseTemperatureC(s, system.value),
    parseDelta: (s: string | number) => parseTemperatureDeltaK(s, system.value),
    parsePressure: (s: string | number) => parsePressureGaugeKPaG(s, system.value),
    parseLength: (s: string | number) => parseLengthM(s, system.value),
  };
}
