// Gauge and absolute pressure. A gauge reads pressure above the local atmosphere, and the
// refrigerant tables need absolute pressure, so every conversion takes the site elevation.

/** Standard sea-level pressure, kPa (ICAO / US Standard Atmosphere 1976). */
export const SEA_LEVEL_PRESSURE_KPA = 101.325;
/** Lowest and highest site elevation accepted, m (the 1976 troposphere layer reaches 11 km). */
export const ELEVATION_RANGE_M = { min: -500, max: 11_000 } as const;

// US Standard Atmosphere 1976, troposphere layer (0-11 km geopotential).
const T0_K = 288.15; // sea-level temperature
const LAPSE_K_PER_M = 0.0065;
const G0 = 9.80665; // m/s²
const MOLAR_MASS_AIR = 0.0289644; // kg/mol
const R_STAR = 8.31432; // J/(mol·K), the value the 1976 standard uses
const EARTH_RADIUS_M = 6_356_766; // for geometric → geopotential height
const EXPONENT = (G0 * MOLAR_MASS_AIR) / (R_STAR * LAPSE_K_PER_M); // ≈ 5.2559

function checkElevation(elevationM: number): void {
  if (!(elevationM >= ELEVATION_RANGE_M.min && elevationM <= ELEVATION_RANGE_M.max)) {
    throw new RangeError(
      `elevation ${String(elevationM)} m is outside ${ELEVATION_RANGE_M.min}..${ELEVATION_RANGE_M.max} m`,
    );
  }
}

function checkFinite(name: string, value: number): void {
  if (!Number.isFinite(value)) throw new RangeError(`${name} must be a finite number, got ${String(value)}`);
}

/** Standard atmospheric pressure, kPa absolute, at a site elevation in m above sea level (barometric formula). */
export function atmosphericPressureKPa(elevationM: number): number {
  checkElevation(elevationM);
  const geopotentialM = (EARTH_RADIUS_M * elevationM) / (EARTH_RADIUS_M + elevationM);
  return SEA_LEVEL_PRESSURE_KPA * Math.pow(1 - (LAPSE_K_PER_M * geopotentialM) / T0_K, EXPONENT);
}

/** Absolute pressure, kPa, from a gauge reading in kPa(g) at a site elevation in m. */
export function gaugeToAbsoluteKPa(kPaG: number, elevationM: number): number {
  checkFinite('gauge pressure', kPaG);
  return kPaG + atmosphericPressureKPa(elevationM);
}

/** Gauge pressure, kPa(g), from an absolute pressure in kPa at a site elevation in m. */
export function absoluteToGaugeKPa(kPaA: number, elevationM: number): number {
  checkFinite('absolute pressure', kPaA);
  return kPaA - atmosphericPressureKPa(elevationM);
}
