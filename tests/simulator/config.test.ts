import { describe, expect, it } from 'vitest';
import { parseCli } from '../../simulator/cli';
import { SimClock, startAgoFor } from '../../simulator/clock';
import { FleetFile } from '../../simulator/fleetFile';
import { SimFaultCommand } from '../../simulator/fleet';
import { checkSettings } from '../../simulator/model/settings';
import { makeBox } from './helpers';

describe('config/set checks of a simulated controller', () => {
  it('applies a valid request whole and reports exactly what it applied', () => {
    const box = makeBox({ kind: 'cooler' });
    const req = { setpointC: 3, differentialK: 1.5, superheatTargetK: 5, defrost: { defrostMaxMin: 40 } };
    const result = checkSettings(box, req);
    expect(result).toEqual({ ok: true, settings: { setpointC: 3, differentialK: 1.5, superheatTargetK: 5, defrostMaxMin: 40 }, applied: req });
  });

  it('refuses a superheat target on a thermostatic-valve box', () => {
    const box = makeBox({ kind: 'cooler', valveType: 'txv', superheatTargetK: 5 });
    const result = checkSettings(box, { superheatTargetK: 6, setpointC: 3 });
    expect(result.ok).toBe(false);
    if (!result.ok) expect(result.error).toMatch(/thermostatic/);
  });

  it('refuses electric defrost on a box without heaters and off-cycle defrost on a freezer', () => {
    expect(checkSettings(makeBox({ kind: 'cooler' }), { defrost: { defrostType: 'electric' } }).ok).toBe(false);
    // Off-cycle defrost relies on box air above freezing (TRADE-NOTES §2, ACHR 110983).
    expect(checkSettings(makeBox({ kind: 'freezer' }), { defrost: { defrostType: 'off-cycle' } }).ok).toBe(false);
    expect(checkSettings(makeBox({ kind: 'freezer' }), { defrost: { defrostType: 'electric', defrostTerminationC: 12 } }).ok).toBe(true);
  });
});

describe('simulated clock', () => {
  it('starts in the past at speed > 1, runs fast, and never passes the real clock', () => {
    let real = 1_000_000;
    const clock = new SimClock(10, 100, () => real);
    expect(clock.nowMs()).toBe(1_000_000 - 100_000);
    real += 5_000; // 5 s real = 50 s simulated
    expect(clock.nowMs()).toBe(1_000_000 - 100_000 + 50_000);
    real += 20_000; // would be 200 s simulated: capped at real time
    expect(clock.nowMs()).toBe(real);
    expect(clock.caughtUp()).toBe(true);
  });

  it('starts a timed fast run so that it ends at real time', () => {
    expect(startAgoFor(60, 120)).toBe(59 * 120);
    expect(startAgoFor(1, 120)).toBe(0);
  });
});

describe('simulator command line', () => {
  it('reads url, interval, speed and faults', () => {
    const o = parseCli(['--url', 'mqtt://127.0.0.1:18830', '--interval', '5', '--speed', '60', '--duration', '30', '--fault', 'SIM-1:low-charge', '--fault', 'SIM-2:thermistor-open:boxAirC'], {});
    expect(o).toMatchObject({ url: 'mqtt://127.0.0.1:18830', intervalS: 5, speed: 60, durationS: 30, startAgoS: 59 * 30 });
    expect(o.faults).toEqual([
      { serial: 'SIM-1', fault: 'low-charge', sensor: undefined },
      { serial: 'SIM-2', fault: 'thermistor-open', sensor: 'boxAirC' },
    ]);
  });

  it('takes the broker from MQTT_URL or MQTT_PORT', () => {
    expect(parseCli([], { MQTT_PORT: '2883' }).url).toBe('mqtt://127.0.0.1:2883');
    expect(parseCli([], { MQTT_URL: 'mqtt://localhost:1999' }).url).toBe('mqtt://localhost:1999');
  });

  it('refuses a broker that is not on loopback, and unknown faults', () => {
    expect(() => parseCli(['--url', 'mqtt://192.0.2.10:1883'], {})).toThrow(/loopback/);
    expect(() => parseCli(['--fault', 'SIM-1:melted'], {})).toThrow(/FAULT one of/);
  });
});

describe('fleet file and fault command schemas', () => {
  const entry = {
    serial: 'SIM-C1', secret: 'secret-123', boxId: 1, kind: 'cooler', valveType: 'eev', refrigerant: 'R-448A', setpointC: 2,
    differentialK: 2, superheatTargetK: 4, valveFullSteps: 1600, elevationM: 300, defrostType: 'off-cycle', defrostIntervalH: 6,
    defrostMaxMin: 30, defrostTerminationC: 5, dripMin: 2, fanDelayMin: 0,
  };

  it('accepts a well-formed fleet and refuses duplicate serials and unknown fields', () => {
    expect(FleetFile.safeParse({ controllers: [entry] }).success).toBe(true);
    expect(FleetFile.safeParse({ controllers: [entry, entry] }).success).toBe(false);
    expect(FleetFile.safeParse({ controllers: [{ ...entry, colour: 'blue' }] }).success).toBe(false);
    expect(FleetFile.safeParse({ controllers: [{ ...entry, refrigerant: 'R-12' }] }).success).toBe(false);
  });

  it('parses fault commands and refuses unknown faults', () => {
    expect(SimFaultCommand.parse({ serial: 'SIM-C1', fault: 'door-ajar', on: true })).toEqual({ serial: 'SIM-C1', fault: 'door-ajar', on: true });
    expect(SimFaultCommand.safeParse({ serial: 'SIM-C1', fault: 'melted', on: true }).success).toBe(false);
  });
});
