/** Helpers for simulator model tests: build a box and collect statistics over a run. */
import { BoxModel } from '../../simulator/model/box';
import type { FaultName } from '../../simulator/model/faults';
import { boxParams, type BoxIdentity } from '../../simulator/model/params';

/** 2026-01-05 08:00 UTC: a weekday morning, so doors and deliveries happen during the run. */
export const START_MS = Date.UTC(2026, 0, 5, 8);

/** A box with defaults for its kind. */
export function makeBox(over: Partial<BoxIdentity> & Pick<BoxIdentity, 'kind'>, seed = 7): BoxModel {
  const identity: BoxIdentity = {
    valveType: 'eev',
    refrigerant: over.kind === 'freezer' ? 'R-448A' : 'R-404A',
    startEpochMs: START_MS,
    ...over,
  };
  return new BoxModel(boxParams(identity), seed);
}

export interface RunStats {
  hours: number;
  boxAirMeanC: number;
  boxAirMaxC: number;
  /** Means over steady running (compressor on, liquid fed, ≥ 4 min since the last compressor event). */
  runSuperheatMeanK: number;
  runSuperheatSdK: number;
  runValveMean: number;
  runSuctionMeanKPaG: number;
  runCoilInletMeanC: number;
  runFraction: number;
  startsPerHour: number;
  startsWithoutCall: number;
  /** Mean rise of suction pressure in the 2 min after each compressor stop, kPa. */
  riseAfterStopKPa: number;
  runSamples: number;
}

/** Steps `model` for `hours` at 1 s and returns statistics; `onStep` sees every step. */
export function runFor(model: BoxModel, hours: number, onStep?: (m: BoxModel) => void): RunStats {
  const t0 = model.tS;
  const starts0 = model.compressorStarts;
  const run0 = model.compressorRunS;
  const events0 = model.events.length;
  let n = 0, air = 0, airMax = -Infinity, k = 0, sh = 0, sh2 = 0, valve = 0, p = 0, coil = 0;
  const pressureAt = new Map<number, number>();
  for (let i = 0; i < hours * 3600; i++) {
    model.step(1);
    onStep?.(model);
    n++;
    air += model.phys.airC;
    airMax = Math.max(airMax, model.phys.airC);
    pressureAt.set(Math.round(model.tS), model.suctionKPaG);
    const last = model.events.at(-1);
    if (model.compressorOn && model.feedOpen && last && model.tS - last.tS > 240) {
      k++;
      sh += model.superheatK;
      sh2 += model.superheatK ** 2;
      valve += model.valveFraction;
      p += model.suctionKPaG;
      coil += model.phys.coilInletC;
    }
  }
  const events = model.events.slice(events0);
  const stops = events.filter((e) => e.kind === 'stop');
  const rises = stops
    .map((e) => {
      const later = pressureAt.get(Math.round(e.tS) + 120);
      return later === undefined ? null : later - e.suctionKPaG;
    })
    .filter((x): x is number => x !== null);
  const shMean = sh / k;
  return {
    hours,
    boxAirMeanC: air / n,
    boxAirMaxC: airMax,
    runSuperheatMeanK: shMean,
    runSuperheatSdK: Math.sqrt(Math.max(0, sh2 / k - shMean ** 2)),
    runValveMean: valve / k,
    runSuctionMeanKPaG: p / k,
    runCoilInletMeanC: coil / k,
    runFraction: (model.compressorRunS - run0) / (model.tS - t0),
    startsPerHour: (model.compressorStarts - starts0) / hours,
    startsWithoutCall: events.filter((e) => e.kind === 'start' && !e.call).length,
    riseAfterStopKPa: rises.length ? rises.reduce((a, b) => a + b, 0) / rises.length : Number.NaN,
    runSamples: k,
  };
}

/** Runs a healthy box and the same box (same seed) with `fault` from t = 1 h; returns both stats over `hours` after that. */
export function compareWithFault(
  over: Partial<BoxIdentity> & Pick<BoxIdentity, 'kind'>,
  fault: FaultName,
  hours: number,
  sensor?: Parameters<BoxModel['setFault']>[2],
): { healthy: RunStats; faulted: RunStats; healthyBox: BoxModel; faultedBox: BoxModel } {
  const healthyBox = makeBox(over);
  const faultedBox = makeBox(over);
  healthyBox.step(3600);
  faultedBox.step(3600);
  faultedBox.setFault(fault, true, sensor);
  return { healthy: runFor(healthyBox, hours), faulted: runFor(faultedBox, hours), healthyBox, faultedBox };
}
