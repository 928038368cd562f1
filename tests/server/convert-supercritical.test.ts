// The ingest's conversion of an R-744 high side above the critical point: no subcooling, and a
// flag that says "supercritical" rather than a generic range note. Pure function, no database.
import { describe, expect, it } from 'vitest';
import { convertReading, type BoxInfo } from '../../server/telemetry/convert';
import type { TelemetryPayload } from '../../shared/schemas/telemetry';

const box: BoxInfo = {
  boxId: 1, customerId: 1, controllerId: 1, serial: 'RH-TEST-744', refrigerant: 'R-744',
  saturationMethod: 'pressure', valveType: 'eev', elevationM: 0, valveFullSteps: 1600, gaugeReference: 'vented-gauge', disabled: false,
};
const reading = (liquidKPaG: number): TelemetryPayload => ({
  seq: 1, ts: '2026-07-01T15:00:00.000Z', suctionKPaG: 2500, suctionLineC: -2, boxAirC: 2,
  liquidKPaG, liquidLineC: 33, valveSteps: 600, compressorOn: true, fanOn: true, defrostOn: false, doorOpen: false,
});

describe('an R-744 high side above the critical pressure', () => {
  // CO₂ critical point 7,377.3 kPa abs, 30.98 °C (CoolProp 8.0.0 / NIST REFPROP); sea level adds 101.325 kPa.
  it('stores no subcooling and flags the reading supercritical, naming the critical point', () => {
    const r = convertReading(reading(9_000), box);
    expect(r.subcoolingK).toBeNull();
    const f = r.flags.find((x) => x.code === 'supercritical');
    expect(f?.affects).toEqual(['subcoolingK']);
    expect(f?.message).toMatch(/supercritical/i);
    expect(r.flags.some((x) => x.code === 'conversion' && x.affects.includes('subcoolingK'))).toBe(false);
    // The suction side still converts: 2,500 kPa(g) + 101.325 = 2,601.3 kPa abs, saturated at −10.63 °C
    // (CoolProp 8.0.0 HEOS::CarbonDioxide), within the engine's 0.1 K.
    expect(r.saturatedSuctionC).not.toBeNull();
    expect(Math.abs((r.saturatedSuctionC as number) - -10.63)).toBeLessThanOrEqual(0.05);
  });
  it('gives the gas-cooler approach (outlet − air in) when the air entering the gas cooler is reported', () => {
    // Approach = gas-cooler outlet − air entering it (common practice for a transcritical high side): 33 − 30 = 3 K.
    const r = convertReading({ ...reading(9_000), condenserAirC: 30 }, box);
    expect(r.approachK).toBe(3);
    expect(r.condenserAirC).toBe(30);
    // Without the air-in reading there is no approach; a subcritical high side has subcooling instead.
    expect(convertReading(reading(9_000), box).approachK).toBeNull();
    expect(convertReading({ ...reading(7_000), liquidLineC: 27, condenserAirC: 24 }, box).approachK).toBeNull();
    // A failed air-in sensor gives none either, with its reason.
    const failed = convertReading({ ...reading(9_000), condenserAirC: -60 }, box);
    expect(failed.approachK).toBeNull();
    expect(failed.flags.find((f) => f.sensor === 'condenserAirC')?.message).toMatch(/Condenser-air sensor open .*gas-cooler approach/);
  });

  it('computes subcooling below the critical pressure', () => {
    // 7,000 kPa(g) + 101.325 = 7,101.3 kPa abs, saturated at 29.31 °C (CoolProp 8.0.0 HEOS::CarbonDioxide):
    // a 27 °C liquid line is 2.31 K subcooled.
    const r = { ...reading(7_000), liquidLineC: 27 };
    const out = convertReading(r, box);
    expect(out.flags.some((x) => x.code === 'supercritical')).toBe(false);
    expect(Math.abs((out.subcoolingK as number) - 2.31)).toBeLessThanOrEqual(0.05);
  });
});

describe('conversion notes, stated instead of a silent blank or a clamp', () => {
  const r404a: BoxInfo = { ...box, serial: 'RH-TEST-404', refrigerant: 'R-404A' };

  it('a liquid-line pressure above a blend\'s table leaves subcooling blank and says where the table ends, not "supercritical"', () => {
    // CoolProp 8.0.0 HEOS::R404A.mix: the bubble point at 67 °C (where the R-404A table ends) is 3,352.3 kPa abs;
    // 5,000 kPa(g) lies well above it.
    const out = convertReading({ ...reading(5_000), suctionKPaG: 300, liquidLineC: 50 }, r404a);
    expect(out.subcoolingK).toBeNull();
    const note = out.flags.find((f) => f.code === 'conversion' && f.affects.includes('subcoolingK'));
    expect(note?.message).toMatch(/R-404A bubble-point pressure .* outside the valid range .*this table ends .* mixture model converged/);
    expect(out.flags.some((f) => f.code === 'supercritical')).toBe(false);
    expect(out.conversionNote).toBe(note?.message);
    // The suction side is unaffected.
    expect(out.saturatedSuctionC).not.toBeNull();
  });

  it('an unknown refrigerant leaves every saturation value blank with the reason', () => {
    const out = convertReading(reading(1_500), { ...box, refrigerant: 'R-12' });
    expect(out.saturatedSuctionC).toBeNull();
    expect(out.superheatK).toBeNull();
    expect(out.subcoolingK).toBeNull();
    const note = out.flags.find((f) => f.code === 'conversion');
    expect(note?.message).toBe('unknown refrigerant R-12');
    expect(note?.affects).toEqual(['saturatedSuctionC', 'superheatK', 'subcoolingK']);
  });
});
