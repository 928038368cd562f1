// Unit conversions and display formatting. Absolute temperatures and temperature *differences*
// convert differently: 0 °C = 32 °F, but a 1 K difference = 1.8 °F difference.

/** kPa in one psi: 1 lbf/in² = 0.45359237 kg × 9.80665 m/s² ÷ (0.0254 m)², exact by definition. */
export const KPA_PER_PSI = 6.894757293168361;
/** kPa in one bar (exact by definition). */
export const KPA_PER_BAR = 100;
/** Kelvin at 0 °C (exact by definition). */
export const KELVIN_AT_ZERO_C = 273.15;
/** Metres in one international foot (exact by definition: international yard and pound agreement, 1959). */
export const M_PER_FT = 0.3048;

/** User display preference: imperial = °F and psig; metric = °C with bar(g) or kPa(g). */
export type UnitSystem = 'imperial' | 'metric-bar' | 'metric-kpa';
/** Every UnitSystem, usable in `z.enum`. */
export const UNIT_SYSTEMS = ['imperial', 'metric-bar', 'metric-kpa'] as const;

/** °C → °F (absolute temperature). */
export function cToF(c: number): number {
  return c * 1.8 + 32;
}
/** °F → °C (absolute temperature). */
export function fToC(f: number): number {
  return (f - 32) / 1.8;
}
/** °C → K (absolute temperature). */
export function cToK(c: number): number {
  return c + KELVIN_AT_ZERO_C;
}
/** K → °C (absolute temperature). */
export function kToC(k: number): number {
  return k - KELVIN_AT_ZERO_C;
}
/** Temperature difference K → °F difference (× 1.8, no offset). */
export function deltaKToDeltaF(deltaK: number): number {
  return deltaK * 1.8;
}
/** Temperature difference °F → K difference (÷ 1.8, no offset). */
export function deltaFToDeltaK(deltaF: number): number {
  return deltaF / 1.8;
}
/** kPa → bar (same reference: gauge stays gauge, absolute stays absolute). */
export function kPaToBar(kPa: number): number {
  return kPa / KPA_PER_BAR;
}
/** bar → kPa (same reference). */
export function barToKPa(bar: number): number {
  return bar * KPA_PER_BAR;
}
/** kPa → psi (same reference: kPa(g) → psig, kPa(abs) → psia). */
export function kPaToPsi(kPa: number): number {
  return kPa / KPA_PER_PSI;
}
/** psi → kPa (same reference). */
export function psiToKPa(psi: number): number {
  return psi * KPA_PER_PSI;
}

/** m → ft (lengths such as site elevation). */
export function mToFt(m: number): number {
  return m / M_PER_FT;
}
/** ft → m. */
export function ftToM(ft: number): number {
  return ft * M_PER_FT;
}

/** Unit label for absolute temperatures in a unit system: '°F' or '°C'. */
export function temperatureUnit(system: UnitSystem): '°F' | '°C' {
  return system === 'imperial' ? '°F' : '°C';
}
/** Unit label for temperature differences: '°F' (imperial) or 'K' (metric). */
export function temperatureDeltaUnit(system: UnitSystem): '°F' | 'K' {
  return system === 'imperial' ? '°F' : 'K';
}
/** Unit label for gauge pressure: 'psig', 'bar(g)' or 'kPa(g)'. */
export function pressureGaugeUnit(system: UnitSystem): 'psig' | 'bar(g)' | 'kPa(g)' {
  if (system === 'imperial') return 'psig';
  return system === 'metric-bar' ? 'bar(g)' : 'kPa(g)';
}

/** Unit label for lengths (site elevation): 'ft' (imperial) or 'm' (metric). */
export function lengthUnit(system: UnitSystem): 'ft' | 'm' {
  return system === 'imperial' ? 'ft' : 'm';
}
/** A length in the system's unit (ft or m) from m. */
export function lengthForDisplay(m: number, system: UnitSystem): number {
  return system === 'imperial' ? mToFt(m) : m;
}

/** Absolute temperature in the system's unit (°F or °C) from °C. */
export function temperatureForDisplay(c: number, system: UnitSystem): number {
  return system === 'imperial' ? cToF(c) : c;
}
/** Temperature difference in the system's unit (°F or K) from K. */
export function temperatureDeltaForDisplay(deltaK: number, system: UnitSystem): number {
  return system === 'imperial' ? deltaKToDeltaF(deltaK) : deltaK;
}
/** Gauge pressure in the system's unit (psig, bar(g) or kPa(g)) from kPa(g). */
export function pressureGaugeForDisplay(kPaG: number, system: UnitSystem): number {
  if (system === 'imperial') return kPaToPsi(kPaG);
  return system === 'metric-bar' ? kPaToBar(kPaG) : kPaG;
}

const MISSING = '—';

function fixed(x: number, digits: number): string {
  const s = x.toFixed(digits);
  return /^-0(\.0+)?$/.test(s) ? s.slice(1) : s; // never show "-0.0"
}

/** Text such as "38.0 °F" or "3.3 °C" from °C; "—" for a missing (non-finite) value. */
export function formatTemperature(c: number, system: UnitSystem, digits = 1): string {
  if (!Number.isFinite(c)) return MISSING;
  return `${fixed(temperatureForDisplay(c, system), digits)} ${temperatureUnit(system)}`;
}
/** Text such as "5.0 °F" or "2.8 K" from a difference in K; "—" for a missing value. */
export function formatTemperatureDelta(deltaK: number, system: UnitSystem, digits = 1): string {
  if (!Number.isFinite(deltaK)) return MISSING;
  return `${fixed(temperatureDeltaForDisplay(deltaK, system), digits)} ${temperatureDeltaUnit(system)}`;
}
/** Text such as "20.0 psig", "1.38 bar(g)" or "138 kPa(g)" from kPa(g); "—" for a missing value. */
export function formatPressureGauge(kPaG: number, system: UnitSystem, digits?: number): string {
  if (!Number.isFinite(kPaG)) return MISSING;
  const d = digits ?? (system === 'imperial' ? 1 : system === 'metric-bar' ? 2 : 0);
  return `${fixed(pressureGaugeForDisplay(kPaG, system), d)} ${pressureGaugeUnit(system)}`;
}

/** A finite number from user input ("12.5", "-3,5", or a number); throws RangeError otherwise. */
export function parseUserNumber(input: string | number): number {
  const value =
    typeof input === 'number'
      ? input
      : /^\s*[+-]?(\d+([.,]\d*)?|[.,]\d+)\s*$/.test(input)
        ? Number(input.trim().replace(',', '.'))
        : Number.NaN;
  if (!Number.isFinite(value)) throw new RangeError(`not a number: ${String(input)}`);
  return value;
}
/** °C from a temperature typed in the system's unit (°F or °C). */
export function parseTemperatureC(input: string | number, system: UnitSystem): number {
  const v = parseUserNumber(input);
  return system === 'imperial' ? fToC(v) : v;
}
/** K from a temperature difference typed in the system's unit (°F or K). */
export function parseTemperatureDeltaK(input: string | number, system: UnitSystem): number {
  const v = parseUserNumber(input);
  return system === 'imperial' ? deltaFToDeltaK(v) : v;
}
/** kPa(g) from a gauge pressure typed in the system's unit (psig, bar(g) or kPa(g)). */
export function parsePressureGaugeKPaG(input: string | number, system: UnitSystem): number {
  const v = parseUserNumber(input);
  if (system === 'imperial') return psiToKPa(v);
  return system === 'metric-bar' ? barToKPa(v) : v;
}
/** m from a length typed in the system's unit (ft or m). */
export function parseLengthM(input: string | number, system: UnitSystem): number {
  const v = parseUserNumber(input);
  return system === 'imperial' ? ftToM(v) : v;
}
/** Text such as "1250 ft" or "381 m" (whole units by default) from m; "—" for a missing value. */
export function formatLength(m: number, system: UnitSystem, digits = 0): string {
  if (!Number.isFinite(m)) return MISSING;
  return `${fixed(lengthForDisplay(m, system), digits)} ${lengthUnit(system)}`;
}
