import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import {
  EVAPORATOR_SUPERHEAT_FLOOR_K,
  SEA_LEVEL_PRESSURE_KPA,
  absoluteToGaugeKPa,
  atmosphericPressureKPa,
  barToKPa,
  cToF,
  cToK,
  deltaFToDeltaK,
  deltaKToDeltaF,
  fToC,
  formatPressureGauge,
  formatTemperature,
  formatTemperatureDelta,
  gasCoolerApproachK,
  gaugeToAbsoluteKPa,
  describeSupercriticalHighSide,
  highSideReading,
  judgeSuperheat,
  kPaToBar,
  kPaToPsi,
  kToC,
  parsePressureGaugeKPaG,
  parseTemperatureC,
  parseTemperatureDeltaK,
  psiToKPa,
  subcoolingK,
  superheatByPressureK,
  superheatByThermistorsK,
  valvePercent,
} from '../../shared/field/index';
import { RefrigerantRangeError, SupercriticalError, saturationTemperature } from '../../shared/refrigerants/index';

const FT = 0.3048; // m per ft, exact by definition (NIST SP 811)

interface HotDayPoint {
  temperatureC: number;
  pressureKPaAbs: number;
}
// Source: CoolProp 8.0.0 bubble-point pressures at 55 and 60 °C, computed by scripts/gen_refrigerants.py.
const hotDay = (
  JSON.parse(readFileSync(new URL('./fixtures/refrigerant-reference.json', import.meta.url), 'utf8')) as {
    refrigerants: Record<string, { hotDayBubble?: HotDayPoint[] }>;
  }
).refrigerants;

describe('units', () => {
  it('converts absolute temperatures', () => {
    // Definitions of the Celsius, Fahrenheit and kelvin scales (NIST SP 811): 0 °C = 32 °F = 273.15 K, 100 °C = 212 °F.
    expect(cToF(0)).toBe(32);
    expect(cToF(100)).toBeCloseTo(212, 12);
    expect(fToC(-40)).toBeCloseTo(-40, 12);
    expect(cToK(0)).toBe(273.15);
    expect(kToC(273.15)).toBe(0);
    // FDA Food Code §3-501.16(A)(2): 41 °F = 5 °C.
    expect(fToC(41)).toBeCloseTo(5, 12);
  });

  it('converts temperature differences without the offset', () => {
    // common practice: a 5 °F superheat difference is 2.78 K (1 K = 1.8 °F, NIST SP 811).
    expect(deltaFToDeltaK(5)).toBeCloseTo(2.78, 2);
    expect(deltaKToDeltaF(10)).toBeCloseTo(18, 12);
    expect(deltaKToDeltaF(deltaFToDeltaK(7))).toBeCloseTo(7, 12);
  });

  it('converts pressures', () => {
    // NIST SP 811: 1 psi = 6.894757 kPa; 1 bar = 100 kPa; standard atmosphere 101.325 kPa = 14.696 psi.
    expect(psiToKPa(1)).toBeCloseTo(6.894757, 6);
    expect(barToKPa(1)).toBe(100);
    expect(kPaToBar(250)).toBe(2.5);
    expect(kPaToPsi(101.325)).toBeCloseTo(14.696, 3);
  });

  it('formats readings in the user unit system', () => {
    // 0 °C = 32 °F (NIST SP 811); 5 °F difference = 2.78 K (common practice); 20 psi = 137.9 kPa = 1.379 bar (NIST SP 811).
    expect(formatTemperature(0, 'imperial')).toBe('32.0 °F');
    expect(formatTemperature(3.33, 'metric-bar')).toBe('3.3 °C');
    expect(formatTemperature(-0.01, 'metric-kpa')).toBe('0.0 °C'); // never "-0.0"
    expect(formatTemperature(Number.NaN, 'imperial')).toBe('—');
    expect(formatTemperatureDelta(deltaFToDeltaK(5), 'imperial')).toBe('5.0 °F');
    expect(formatTemperatureDelta(deltaFToDeltaK(5), 'metric-bar')).toBe('2.8 K');
    expect(formatPressureGauge(psiToKPa(20), 'imperial')).toBe('20.0 psig');
    expect(formatPressureGauge(psiToKPa(20), 'metric-bar')).toBe('1.38 bar(g)');
    expect(formatPressureGauge(psiToKPa(20), 'metric-kpa')).toBe('138 kPa(g)');
    expect(formatPressureGauge(150, 'metric-kpa', 1)).toBe('150.0 kPa(g)');
  });

  it('parses user input back to SI units', () => {
    expect(parseTemperatureC('41', 'imperial')).toBeCloseTo(5, 12); // FDA Food Code §3-501.16: 41 °F = 5 °C
    expect(parseTemperatureC(' -3,5 ', 'metric-bar')).toBe(-3.5);
    expect(parseTemperatureDeltaK('9', 'imperial')).toBeCloseTo(5, 12);
    expect(parseTemperatureDeltaK(4, 'metric-kpa')).toBe(4);
    expect(parsePressureGaugeKPaG('20', 'imperial')).toBeCloseTo(psiToKPa(20), 12);
    expect(parsePressureGaugeKPaG('1.5', 'metric-bar')).toBe(150);
    expect(parsePressureGaugeKPaG('150', 'metric-kpa')).toBe(150);
    for (const bad of ['', 'abc', '1.2.3', '12 psig', 'NaN', 'Infinity']) {
      expect(() => parseTemperatureC(bad, 'imperial'), bad).toThrow(RangeError);
    }
    expect(() => parsePressureGaugeKPaG(Number.NaN, 'metric-kpa')).toThrow(RangeError);
  });
});

describe('atmospheric pressure and gauge readings', () => {
  it('follows the standard atmosphere', () => {
    // ICAO / US Standard Atmosphere 1976: 101.325 kPa at sea level.
    expect(atmosphericPressureKPa(0)).toBe(SEA_LEVEL_PRESSURE_KPA);
    // US Standard Atmosphere 1976 table: about 83.5 kPa at 1,600 m (from memory).
    expect(Math.abs(atmosphericPressureKPa(1600) - 83.5)).toBeLessThan(0.1);
    // Altitude table (lemon-manuals; hvacrschool), TRADE-NOTES #24: 12.2 psia at 5,000 ft (to 0.1 psi).
    expect(Math.abs(kPaToPsi(atmosphericPressureKPa(5000 * FT)) - 12.2)).toBeLessThanOrEqual(0.1);
    // U.S. Standard Atmosphere 1976 (TRADE-NOTES #24): 11.78 psia at 6,000 ft, given to 0.01 psi.
    expect(Math.abs(kPaToPsi(atmosphericPressureKPa(6000 * FT)) - 11.78)).toBeLessThanOrEqual(0.005);
  });

  it('converts between gauge and absolute pressure at a site (and back: a round trip)', () => {
    // Standard sea-level atmosphere 101.325 kPa (ICAO / US Standard Atmosphere 1976).
    expect(gaugeToAbsoluteKPa(100, 0)).toBeCloseTo(201.325, 9);
    expect(absoluteToGaugeKPa(gaugeToAbsoluteKPa(137.9, 1600), 1600)).toBeCloseTo(137.9, 9);
    // TRADE-NOTES #24: a gauge zeroed at 5,000 ft reads ~2.5 psi more than the same absolute pressure at sea level.
    const a = psiToKPa(40);
    expect(Math.abs(kPaToPsi(absoluteToGaugeKPa(a, 5000 * FT) - absoluteToGaugeKPa(a, 0)) - 2.5)).toBeLessThanOrEqual(0.1);
  });

  it('refuses elevations outside the model and non-finite readings', () => {
    for (const bad of [-1000, 20_000, Number.NaN, Number.POSITIVE_INFINITY]) {
      expect(() => atmosphericPressureKPa(bad), String(bad)).toThrow(RangeError);
    }
    expect(() => gaugeToAbsoluteKPa(Number.NaN, 0)).toThrow(RangeError);
  });
});

describe('superheat and subcooling', () => {
  it('wires superheat as suction-line temperature minus the engine\'s dew point at the absolute suction pressure', () => {
    // common practice: superheat = suction-line temperature − saturated suction temperature (dew point for blends).
    const r = superheatByPressureK({ refrigerant: 'R-448A', suctionKPaG: 150, suctionLineC: -20, elevationM: 0 });
    expect(r.saturatedSuctionC).toBe(saturationTemperature('R-448A', 150 + 101.325, 'dew'));
    expect(r.superheatK).toBeCloseTo(-20 - r.saturatedSuctionC, 12);
    expect(r.saturatedSuctionC).toBeGreaterThan(saturationTemperature('R-448A', 150 + 101.325, 'bubble'));
  });

  it('reads superheat from a published pressure-temperature point', () => {
    // NIST-REFPROP P-T chart (calcspec.com), TRADE-NOTES #19: R-134a 18.4 psig = 20 °F; line at 30 °F → 10 °F (±0.3 °F).
    const r = superheatByPressureK({ refrigerant: 'R-134a', suctionKPaG: psiToKPa(18.4), suctionLineC: fToC(30), elevationM: 0 });
    expect(Math.abs(deltaKToDeltaF(r.superheatK) - 10)).toBeLessThanOrEqual(0.3);
    // hvacrschool, TRADE-NOTES #22: R-407C dew 50.8 °F at 80 psig; line at 60 °F → 9.2 °F (±0.3 °F).
    const b = superheatByPressureK({ refrigerant: 'R-407C', suctionKPaG: psiToKPa(80), suctionLineC: fToC(60), elevationM: 0 });
    expect(Math.abs(deltaKToDeltaF(b.superheatK) - 9.2)).toBeLessThanOrEqual(0.3);
  });

  it('gives subcooling from the bubble point', () => {
    // hvacrschool, TRADE-NOTES #22: R-407C bubble 40.0 °F at 80 psig; liquid line at 30 °F → 10.0 °F (±0.3 °F).
    const sc = subcoolingK({ refrigerant: 'R-407C', liquidKPaG: psiToKPa(80), liquidLineC: fToC(30), elevationM: 0 });
    expect(Math.abs(deltaKToDeltaF(sc) - 10)).toBeLessThanOrEqual(0.3);
  });

  it('gives a different saturation temperature for the same gauge reading at altitude', () => {
    // Physics: the gauge reads against the local atmosphere, lower at 1,600 m (TRADE-NOTES §3 gauge vs absolute).
    const at = (elevationM: number) =>
      superheatByPressureK({ refrigerant: 'R-404A', suctionKPaG: psiToKPa(20), suctionLineC: -20, elevationM });
    const sea = at(0);
    const high = at(1600);
    expect(high.saturatedSuctionC).toBeLessThan(sea.saturatedSuctionC - 1);
    expect(high.superheatK).toBeGreaterThan(sea.superheatK + 1);
    // TRADE-NOTES §3: at freezer suction pressures a 2.5-psi error is several °F of saturation temperature.
    const seaF = cToF(saturationTemperature('R-404A', psiToKPa(10 + 14.696), 'dew'));
    const lowF = cToF(saturationTemperature('R-404A', psiToKPa(10 + 14.696 - 2.5), 'dew'));
    expect(seaF - lowF).toBeGreaterThan(2);
  });

  it('changes the conversion of one pressure when the refrigerant changes', () => {
    // common practice: every refrigerant has its own pressure-temperature relation.
    const reading = { suctionKPaG: psiToKPa(20), suctionLineC: 0, elevationM: 0 };
    const r134a = superheatByPressureK({ ...reading, refrigerant: 'R-134a' });
    const r404a = superheatByPressureK({ ...reading, refrigerant: 'R-404A' });
    expect(r134a.saturatedSuctionC - r404a.saturatedSuctionC).toBeGreaterThan(10);
  });

  it('flags the two-thermistor method on a blend with glide', () => {
    // ACHR 98144 (TRADE-NOTES §3): with glide the inlet sensor overstates superheat by up to the glide.
    const blend = superheatByThermistorsK({ refrigerant: 'R-407C', suctionLineC: 8, coilInletC: 2 });
    expect(blend.superheatK).toBe(6);
    expect(blend.glideWarning).toBe(true);
    // CoolProp 8.0.0 HEOS::R407C.mix: bubble point 2 °C at 605.7 kPa abs, where the dew point is 8.08 °C: glide 6.08 K.
    expect(Math.abs(blend.glideK - 6.08)).toBeLessThanOrEqual(0.01);
    // Against that dew point (8.08 °C, CoolProp 8.0.0 as above) the suction line at 8 °C has −0.08 K.
    expect(Math.abs(blend.dewPointC - 8.08)).toBeLessThanOrEqual(0.01);
    expect(Math.abs(blend.superheatAgainstDewK - -0.08)).toBeLessThanOrEqual(0.01);
    expect(blend.note).toContain('overstate');
    // At the pressure whose bubble point is the inlet reading, the pressure method gives exactly glideK less.
    const p = superheatByPressureK({
      refrigerant: 'R-407C',
      suctionKPaG: absoluteToGaugeKPa(pressureAtBubble(2), 0),
      suctionLineC: 8,
      elevationM: 0,
    });
    expect(blend.superheatK - p.superheatK).toBeCloseTo(blend.glideK, 6);
    const pure = superheatByThermistorsK({ refrigerant: 'R-134a', suctionLineC: 8, coilInletC: 2 });
    expect(pure.glideWarning).toBe(false);
    expect(pure.glideK).toBeLessThan(0.01);
    expect(pure.note).toBeNull();
  });

  it('gives subcooling at 55 and 60 °C hot-day condensing for R-404A, R-448A and R-134a', () => {
    // CoolProp 8.0.0 bubble-point pressures (fixture); a liquid line 5 K below the bubble point is 5 K of subcooling.
    for (const id of ['R-404A', 'R-448A', 'R-134a'] as const) {
      const points = hotDay[id]?.hotDayBubble ?? [];
      expect(points.map((p) => p.temperatureC), id).toEqual([55, 60]);
      for (const { temperatureC, pressureKPaAbs } of points) {
        const sc = subcoolingK({
          refrigerant: id,
          liquidKPaG: pressureKPaAbs - SEA_LEVEL_PRESSURE_KPA,
          liquidLineC: temperatureC - 5,
          elevationM: 0,
        });
        expect(Math.abs(sc - 5), `${id} at ${temperatureC} °C`).toBeLessThanOrEqual(0.01);
      }
    }
    // CoolProp 8.0.0 HEOS::R404A.mix: 55 °C bubble = 2,585.1 kPa abs = 360.2 psig, above the old 320 psig table end.
    expect(Math.abs(kPaToPsi(2585.1234 - SEA_LEVEL_PRESSURE_KPA) - 360.2)).toBeLessThanOrEqual(0.05);
  });

  it('passes range errors through instead of returning NaN', () => {
    expect(() =>
      superheatByPressureK({ refrigerant: 'R-404A', suctionKPaG: 1e5, suctionLineC: 0, elevationM: 0 }),
    ).toThrow(RefrigerantRangeError);
    expect(() =>
      superheatByPressureK({ refrigerant: 'R-404A', suctionKPaG: 100, suctionLineC: Number.NaN, elevationM: 0 }),
    ).toThrow(RangeError);
    expect(() => subcoolingK({ refrigerant: 'R-404A', liquidKPaG: -200, liquidLineC: 20, elevationM: 0 })).toThrow(
      RefrigerantRangeError,
    );
  });
});

function pressureAtBubble(c: number): number {
  // Bisection on the engine's bubble curve: the absolute pressure, kPa, whose bubble point is c (°C).
  let lo = 50;
  let hi = 3000;
  for (let i = 0; i < 100; i++) {
    const mid = 0.5 * (lo + hi);
    if (saturationTemperature('R-407C', mid, 'bubble') < c) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

describe('transcritical R-744 high side', () => {
  // CoolProp 8.0.0 / NIST WebBook: CO₂ critical pressure 7,377.3 kPa abs (30.978 °C).
  it('says supercritical above the critical pressure and gives the gas-cooler outlet and approach instead of subcooling', () => {
    // 9,000 kPa(g) at sea level: a warm-day gas-cooler pressure (about 90 bar; common practice).
    const r = highSideReading({ refrigerant: 'R-744', highSideKPaG: 9000, outletC: 35, ambientC: 32, elevationM: 0 });
    expect(r.state).toBe('supercritical');
    if (r.state !== 'supercritical') return;
    expect(r.gasCoolerOutletC).toBe(35);
    expect(r.approachK).toBeCloseTo(3, 12); // approach = outlet − entering air (common practice)
    expect(r.criticalKPaAbs).toBeCloseTo(7377.3, 1);
    expect(describeSupercriticalHighSide(r, 'metric-bar')).toContain('no subcooling');
    expect(describeSupercriticalHighSide(r, 'imperial')).toContain('5.4 °F'); // 3 K = 5.4 °F (NIST SP 811)
    const noAir = highSideReading({ refrigerant: 'R-744', highSideKPaG: 9000, outletC: 35, ambientC: null, elevationM: 0 });
    expect(noAir.state === 'supercritical' && noAir.approachK === null).toBe(true);
    // Subcooling itself refuses with the distinct supercritical error, not the generic range error.
    expect(() => subcoolingK({ refrigerant: 'R-744', liquidKPaG: 9000, liquidLineC: 35, elevationM: 0 })).toThrow(SupercriticalError);
    expect(gasCoolerApproachK(36.5, 33)).toBeCloseTo(3.5, 12);
  });

  it('gives subcooling for R-744 below the critical point, at 29–30 °C', () => {
    // CoolProp 8.0.0 HEOS::CarbonDioxide: 30 °C saturation 7,213.7 kPa abs; liquid at 27 °C → 3 K subcooling.
    const r = highSideReading({ refrigerant: 'R-744', highSideKPaG: 7213.7 - SEA_LEVEL_PRESSURE_KPA, outletC: 27, ambientC: 25, elevationM: 0 });
    expect(r.state).toBe('subcritical');
    if (r.state !== 'subcritical') return;
    expect(Math.abs(r.subcoolingK - 3)).toBeLessThanOrEqual(0.01);
    // CoolProp 8.0.0: 29 °C saturation 7,050.9 kPa abs.
    const sc = subcoolingK({ refrigerant: 'R-744', liquidKPaG: 7050.9 - SEA_LEVEL_PRESSURE_KPA, liquidLineC: 25, elevationM: 0 });
    expect(Math.abs(sc - 4)).toBeLessThanOrEqual(0.01);
  });

  it('treats a blend above its tables as out of range, never supercritical', () => {
    expect(() => highSideReading({ refrigerant: 'R-404A', highSideKPaG: 1e5, outletC: 40, ambientC: 35, elevationM: 0 })).toThrow(
      RefrigerantRangeError,
    );
    const r = highSideReading({ refrigerant: 'R-404A', highSideKPaG: 2585.1234 - SEA_LEVEL_PRESSURE_KPA, outletC: 50, ambientC: 35, elevationM: 0 });
    // CoolProp 8.0.0 HEOS::R404A.mix: 55 °C bubble point at 2,585.1 kPa abs → 5 K subcooling at a 50 °C liquid line.
    expect(r.state === 'subcritical' && Math.abs(r.subcoolingK - 5) <= 0.01).toBe(true);
  });
});

describe('valve position', () => {
  it('reports percent open from steps', () => {
    // common practice: % open = steps ÷ full-travel steps; 800 of 1,600 steps is 50 %.
    expect(valvePercent(800, 1600)).toBe(50);
    expect(valvePercent(0, 1600)).toBe(0);
    expect(valvePercent(1600, 1600)).toBe(100);
    expect(valvePercent(240, 480)).toBe(50);
  });

  it('refuses impossible step counts', () => {
    for (const [s, f] of [[1601, 1600], [-1, 1600], [1.5, 1600], [10, 0], [Number.NaN, 1600], [10, 1600.5]] as const) {
      expect(() => valvePercent(s, f), `${s}/${f}`).toThrow(RangeError);
    }
  });
});

describe('superheat judgement', () => {
  it('sets the evaporator superheat floor at 5 °F', () => {
    // common practice: technicians keep evaporator superheat above about 5 °F (2.78 K) so liquid does not leave the coil.
    expect(EVAPORATOR_SUPERHEAT_FLOOR_K).toBeCloseTo(2.78, 2);
  });

  it('says low, in band or high in plain words', () => {
    const low = judgeSuperheat(2, 5, 1);
    expect(low.verdict).toBe('low');
    expect(low.belowSuperheatFloor).toBe(true);
    expect(low.message).toContain('below the target band of 4.0 K to 6.0 K');
    expect(low.message).toContain('evaporator superheat floor');
    expect(low.message).not.toMatch(/protect the compressor/);
    const ok = judgeSuperheat(5.5, 5, 1);
    expect(ok.verdict).toBe('in-band');
    expect(ok.belowSuperheatFloor).toBe(false);
    const edge = judgeSuperheat(6, 5, 1);
    expect(edge.verdict).toBe('in-band');
    const high = judgeSuperheat(9, 5, 1, 'imperial');
    expect(high.verdict).toBe('high');
    expect(high.message).toContain('16.2 °F');
  });

  it('refuses a negative band or non-finite input', () => {
    expect(() => judgeSuperheat(5, 5, -1)).toThrow(RangeError);
    expect(() => judgeSuperheat(Number.NaN, 5, 1)).toThrow(RangeError);
  });
});
