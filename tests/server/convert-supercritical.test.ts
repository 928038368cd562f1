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
    // The suction side (2,500 kPa g ≈ 2,601 kPa abs, about −12 °C saturated for CO₂ — CoolProp figure from memory) still converts.
    expect(r.saturatedSuctionC).not.toBeNull();
    expect(r.saturatedSuctionC as number).toBeGreaterThan(-14);
    expect(r.saturatedSuctionC as number).toBeLessThan(-10);
  });
  it('computes subcooling below the critical pressure (7,000 kPa g ≈ 7,101 kPa abs, about 29.3 °C saturated — CoolProp figure from memory, hence the wide band)', () => {
    const r = { ...reading(7_000), liquidLineC: 27 };
    const out = convertReading(r, box);
    expect(out.flags.some((x) => x.code === 'supercritical')).toBe(false);
    expect(out.subcoolingK as number).toBeGreaterThan(1.5);
    expect(out.subcoolingK as number).toBeLessThan(3.5);
  });
});
