// Each fault against a healthy run of the same box with the same seed (same doors, same deliveries).
// Signatures: TRADE-NOTES §4 table (refrigeration-engineer.com "9 superheat & subcooling scenarios";
// ACHR 132879/135634/86471/130257 on iced evaporators; ACHR 142618; techtownforum; refrigeratordiagrams.com;
// an instrument maker's NTC page). EEV-position readings are inference there too.
import { describe, expect, it } from 'vitest';
import { saturationTemperature } from '../../shared/refrigerants';
import { gaugeToAbsoluteKPa } from '../../shared/field/pressure';
import { compareWithFault, makeBox, runFor } from './helpers';

describe('fault signatures against a healthy run with the same seed', () => {
  it('low-charge: superheat high, valve pinned open, suction low, long runs, box warmer, subcooling low', () => {
    // TRADE-NOTES §4 "Low charge / leak" (refrigeration-engineer.com superheat scenarios).
    const { healthy, faulted, faultedBox } = compareWithFault({ kind: 'cooler' }, 'low-charge', 8);
    expect(faulted.runSuperheatMeanK).toBeGreaterThan(healthy.runSuperheatMeanK + 5);
    expect(faulted.runValveMean).toBeGreaterThan(0.95);
    expect(healthy.runValveMean).toBeLessThan(0.8);
    expect(faulted.runSuctionMeanKPaG).toBeLessThan(0.6 * healthy.runSuctionMeanKPaG);
    expect(faulted.runFraction).toBeGreaterThan(healthy.runFraction + 0.15);
    expect(faulted.boxAirMeanC).toBeGreaterThan(healthy.boxAirMeanC);
    // Subcooling = bubble temperature at liquid pressure − liquid-line temperature (TRADE-NOTES §3: bubble point for subcooling).
    const subcoolingK: number[] = [];
    runFor(faultedBox, 1, (m) => {
      if (!m.compressorOn) return;
      const r = m.reading();
      if (r.liquidKPaG === undefined || r.liquidLineC === undefined) return;
      subcoolingK.push(saturationTemperature('R-404A', gaugeToAbsoluteKPa(r.liquidKPaG, 0), 'bubble') - r.liquidLineC);
    });
    expect(subcoolingK.length).toBeGreaterThan(100);
    expect(subcoolingK.slice(-100).reduce((a, b) => a + b, 0) / 100).toBeLessThan(1.5);
  });

  it('iced-coil: coil and suction pressure drop, the valve closes, box air rises while the compressor runs', () => {
    // TRADE-NOTES §4 "Iced coil / failed evap fan" (ACHR 132879/135634/86471/130257).
    const { healthy, faulted } = compareWithFault({ kind: 'cooler' }, 'iced-coil', 8);
    expect(faulted.runSuctionMeanKPaG).toBeLessThan(healthy.runSuctionMeanKPaG - 100);
    expect(faulted.runCoilInletMeanC).toBeLessThan(healthy.runCoilInletMeanC - 5);
    expect(faulted.runValveMean).toBeLessThan(0.6 * healthy.runValveMean);
    expect(faulted.boxAirMeanC).toBeGreaterThan(healthy.boxAirMeanC + 0.2);
    expect(faulted.runFraction).toBeGreaterThan(healthy.runFraction + 0.2);
    // An EEV keeps holding its target; it does not run high like a starved coil.
    expect(faulted.runSuperheatMeanK).toBeLessThan(healthy.runSuperheatMeanK + 0.5);
  });

  it('evap-fan-failed on a thermostatic valve: superheat falls with coil temperature and suction pressure', () => {
    // TRADE-NOTES §4 "Iced coil / failed evap fan": SH falls; a TXV shows it directly.
    const box = { kind: 'cooler' as const, valveType: 'txv' as const, superheatTargetK: 5 };
    const { healthy, faulted, faultedBox } = compareWithFault(box, 'evap-fan-failed', 8);
    expect(faulted.runSuperheatMeanK).toBeLessThan(healthy.runSuperheatMeanK - 1);
    expect(faulted.runSuctionMeanKPaG).toBeLessThan(healthy.runSuctionMeanKPaG - 100);
    expect(faulted.runCoilInletMeanC).toBeLessThan(healthy.runCoilInletMeanC - 5);
    expect(faulted.boxAirMeanC).toBeGreaterThan(healthy.boxAirMeanC + 0.2);
    expect(faulted.runFraction).toBeGreaterThan(healthy.runFraction + 0.2);
    // The controller still commands the fans; the motor does not turn.
    expect(faultedBox.reading().fanOn).toBe(faultedBox.defrost.phase === 'none');
  });

  it('defrost-heater-failed: the coil never passes 0 °C, defrost ends on the time limit, pull-down gets longer day by day', () => {
    // TRADE-NOTES §4 "Failed defrost": coil never passes ~32 °F, ends on fail-safe time, pull-down longer each day.
    const { healthyBox, faultedBox } = compareWithFault({ kind: 'freezer', defrostMaxMin: 40 }, 'defrost-heater-failed', 48);
    expect(healthyBox.defrost.history.length).toBeGreaterThanOrEqual(7);
    expect(healthyBox.defrost.history.every((d) => d.reason === 'temperature' && d.maxCoilC >= 10)).toBe(true);
    expect(faultedBox.defrost.history.length).toBe(healthyBox.defrost.history.length);
    for (const d of faultedBox.defrost.history) {
      expect(d.reason).toBe('time');
      expect(d.maxCoilC).toBeLessThan(0);
      expect(Math.abs(d.endS - d.startS - 40 * 60)).toBeLessThanOrEqual(2);
    }
    expect(faultedBox.phys.frostKg).toBeGreaterThan(healthyBox.phys.frostKg + 3);
    const healthyPullDown = pullDownMinutes(healthyBox);
    const faultedPullDown = pullDownMinutes(faultedBox);
    expect(mean(faultedPullDown.slice(-3))).toBeGreaterThan(mean(faultedPullDown.slice(0, 3)));
    expect(mean(faultedPullDown.slice(-3))).toBeGreaterThan(mean(healthyPullDown.slice(-3)) + 5);
  });

  it('door-ajar: door reads open, box air rises fast, the compressor runs continuously', () => {
    // TRADE-NOTES §4 "Door open / torn gasket".
    const { healthy, faulted, faultedBox } = compareWithFault({ kind: 'cooler' }, 'door-ajar', 4);
    expect(faultedBox.reading().doorOpen).toBe(true);
    expect(faulted.boxAirMeanC).toBeGreaterThan(healthy.boxAirMeanC + 1);
    expect(faulted.boxAirMaxC).toBeGreaterThan(2 + 2 + 2);
    expect(faulted.runFraction).toBeGreaterThan(0.85);
  });

  it.each([
    ['thermistor-open', -60],
    ['thermistor-shorted', 130],
  ] as const)('%s: the chosen thermistor reads off-scale (%d °C, the telemetry range end)', (fault, expectedC) => {
    // TRADE-NOTES §4 "Sensor faults (NTC)": open → off-scale cold, short → off-scale hot.
    const line = compareWithFault({ kind: 'cooler' }, fault, 1);
    expect(line.faultedBox.reading().suctionLineC).toBe(expectedC);
    expect(line.healthyBox.reading().suctionLineC).not.toBe(expectedC);
    const air = compareWithFault({ kind: 'cooler' }, fault, 1, 'boxAirC');
    expect(air.faultedBox.reading().boxAirC).toBe(expectedC);
    expect(air.faultedBox.reading().suctionLineC).not.toBe(expectedC);
    // Without a box-air reading the controller falls back to a timed duty cycle instead of stopping.
    expect(air.faulted.startsPerHour).toBeGreaterThan(0);
  });

  it('valve-leak-through: suction rises fast after shutdown and the compressor restarts with no call', () => {
    // TRADE-NOTES §4 "Valve/solenoid leak-through" (ACHR 142618; techtownforum).
    const { healthy, faulted } = compareWithFault({ kind: 'cooler' }, 'valve-leak-through', 6);
    expect(healthy.startsWithoutCall).toBe(0);
    expect(faulted.startsWithoutCall).toBeGreaterThan(10);
    expect(faulted.riseAfterStopKPa).toBeGreaterThan(healthy.riseAfterStopKPa + 100);
    expect(faulted.startsPerHour).toBeGreaterThan(3 * healthy.startsPerHour);
  });

  it('short-cycling: many starts per hour', () => {
    // TRADE-NOTES §4 "Short cycling" (refrigeratordiagrams.com): tight LP differential.
    const { healthy, faulted } = compareWithFault({ kind: 'cooler' }, 'short-cycling', 6);
    expect(faulted.startsPerHour).toBeGreaterThanOrEqual(10);
    expect(faulted.startsPerHour).toBeGreaterThan(3 * healthy.startsPerHour);
  });

  it('clearing a fault brings the healthy behaviour back', () => {
    const box = makeBox({ kind: 'cooler' });
    box.step(3600);
    box.setFault('low-charge', true);
    const sick = runFor(box, 3);
    box.setFault('low-charge', false);
    box.step(1800);
    const well = runFor(box, 3);
    expect(sick.runValveMean).toBeGreaterThan(0.95);
    expect(well.runValveMean).toBeLessThan(0.8);
    expect(Math.abs(well.runSuperheatMeanK - box.params.superheatTargetK)).toBeLessThan(0.7);
  });
});

/** Minutes from the end of each defrost cycle until the thermostat is next satisfied (pull-down). */
function pullDownMinutes(box: ReturnType<typeof makeBox>): number[] {
  return box.defrost.history.flatMap((d) => {
    const endS = d.fanDelayEndS ?? d.dripEndS ?? d.endS;
    const stop = box.events.find((e) => e.kind === 'stop' && e.tS > endS && !e.call && !e.inDefrost);
    return stop ? [(stop.tS - endS) / 60] : [];
  });
}

function mean(xs: number[]): number {
  return xs.reduce((a, b) => a + b, 0) / xs.length;
}

describe('faults for the sensor and pump-down alarm rules', () => {
  it('sensor-stuck: the chosen thermistor keeps its value for hours while the healthy run moves and the compressor cycles', () => {
    // A flat-lined sensor (shared/rules/sensors.ts: bit-identical for hours while the compressor cycled): common practice.
    const { healthyBox, faultedBox } = compareWithFault({ kind: 'cooler' }, 'sensor-stuck', 0);
    const stuckAt = faultedBox.reading().suctionLineC;
    const seen = new Set<number>();
    const healthySeen = new Set<number>();
    const starts0 = faultedBox.compressorStarts;
    runFor(faultedBox, 4, (m) => seen.add(m.reading().suctionLineC));
    runFor(healthyBox, 4, (m) => healthySeen.add(m.reading().suctionLineC));
    expect([...seen]).toEqual([stuckAt]);
    expect(healthySeen.size).toBeGreaterThan(20);
    expect(faultedBox.compressorStarts - starts0).toBeGreaterThanOrEqual(2);
    // The other thermistors still move.
    const air = new Set<number>();
    runFor(faultedBox, 1, (m) => air.add(m.reading().boxAirC));
    expect(air.size).toBeGreaterThan(3);
  });

  it('sensor-drift on box air: the reading climbs 0.5 K per hour above the truth and the controller holds the real box colder', () => {
    // Our choice of drift rate (simulator/model/faults.ts DRIFT_K_PER_H); a controller regulating on a high-reading sensor over-cools: common practice.
    const { healthy, faulted, faultedBox } = compareWithFault({ kind: 'cooler' }, 'sensor-drift', 6, 'boxAirC');
    const offsets: number[] = [];
    runFor(faultedBox, 1, (m) => offsets.push(m.reading().boxAirC - m.phys.airC));
    const meanOffsetK = offsets.reduce((a, b) => a + b, 0) / offsets.length;
    // 6.5 h to 7.5 h after the fault began: 3.25 … 3.75 K high (plus sensor noise).
    expect(meanOffsetK).toBeGreaterThan(3.1);
    expect(meanOffsetK).toBeLessThan(3.9);
    expect(faulted.boxAirMeanC).toBeLessThan(healthy.boxAirMeanC - 1);
  });

  it('valve-leak-through-severe: pump-down never reaches the low-pressure cut-out and always ends on its time limit', () => {
    // A leaking liquid-line solenoid or valve seat keeps feeding the coil, so the low side does not pump down (TRADE-NOTES §4 "Valve/solenoid leak-through"; severity our choice).
    const { healthyBox, faultedBox } = compareWithFault({ kind: 'cooler' }, 'valve-leak-through-severe', 6);
    const after = (b: typeof healthyBox) => b.events.filter((e) => e.kind === 'stop' && e.tS > 3600);
    const healthyStops = after(healthyBox);
    const faultedStops = after(faultedBox);
    expect(healthyStops.filter((e) => e.reason === 'lp-cutout').length).toBeGreaterThan(3);
    expect(healthyStops.some((e) => e.reason === 'pumpdown-timeout')).toBe(false);
    expect(faultedStops.length).toBeGreaterThan(3);
    expect(faultedStops.every((e) => e.reason === 'pumpdown-timeout')).toBe(true);
    // At each time-out the suction pressure is still well above the cut-out.
    const cutOut = faultedBox.lpSettings.cutOutKPaG;
    for (const e of faultedStops) expect(e.suctionKPaG).toBeGreaterThan(cutOut + 20);
    // The mild leak still pumps down (its signature is the restart on pressure, tested above).
    const mild = compareWithFault({ kind: 'cooler' }, 'valve-leak-through', 6).faultedBox;
    expect(after(mild).some((e) => e.reason === 'lp-cutout')).toBe(true);
  });
});
