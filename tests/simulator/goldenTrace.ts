/**
 * The golden trace of the box model: a few boxes with fixed seeds stepped for some simulated hours,
 * their true state and their reading sampled every 10 s. tests/simulator/model.golden.test.ts
 * checks that the model still produces tests/simulator/fixtures/model-golden.json, which was
 * recorded from the model before its step was made faster. Re-record it only when a change is
 * meant to alter what the model simulates:
 *   TZ=UTC npx tsx tests/simulator/goldenTrace.ts --write
 */
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { BoxModel } from '../../simulator/model/box';
import type { FaultName, ThermistorName } from '../../simulator/model/faults';
import { boxParams, type BoxIdentity } from '../../simulator/model/params';
import { START_MS } from './helpers';

export const GOLDEN_FIXTURE = fileURLToPath(new URL('./fixtures/model-golden.json', import.meta.url));
/** Sampling interval of the trace, s (the controllers' reporting interval). */
export const GOLDEN_SAMPLE_S = 10;
/** Numbers are stored rounded to this many decimals (far below the test's tolerance). */
const DECIMALS = 9;

/** A fault switched on (or off) at a model time, s. */
interface FaultSwitch {
  atS: number;
  fault: FaultName;
  on: boolean;
  sensor?: ThermistorName;
}

export interface GoldenCase {
  name: string;
  identity: BoxIdentity;
  seed: number;
  hours: number;
  faults: FaultSwitch[];
}

/** The traced boxes: a cooler and a freezer on EEVs, and a TXV cooler at altitude through a string of faults. */
export const GOLDEN_CASES: GoldenCase[] = [
  { name: 'cooler R-404A eev', identity: { kind: 'cooler', valveType: 'eev', refrigerant: 'R-404A', startEpochMs: START_MS }, seed: 7, hours: 6, faults: [] },
  {
    name: 'freezer R-448A eev electric defrost',
    identity: { kind: 'freezer', valveType: 'eev', refrigerant: 'R-448A', startEpochMs: START_MS, elevationM: 180 },
    seed: 11,
    hours: 6,
    faults: [],
  },
  {
    name: 'cooler R-290 txv with faults',
    identity: { kind: 'cooler', valveType: 'txv', refrigerant: 'R-290', startEpochMs: START_MS, elevationM: 1600, superheatTargetK: 5 },
    seed: 23,
    hours: 6,
    faults: [
      { atS: 1800, fault: 'low-charge', on: true },
      { atS: 5400, fault: 'low-charge', on: false },
      { atS: 6000, fault: 'door-ajar', on: true },
      { atS: 7800, fault: 'door-ajar', on: false },
      { atS: 9000, fault: 'short-cycling', on: true },
      { atS: 12_600, fault: 'short-cycling', on: false },
      { atS: 13_000, fault: 'sensor-drift', on: true, sensor: 'boxAirC' },
      { atS: 14_000, fault: 'valve-leak-through-severe', on: true },
      { atS: 16_000, fault: 'valve-leak-through-severe', on: false },
      { atS: 16_500, fault: 'iced-coil', on: true },
      { atS: 19_800, fault: 'iced-coil', on: false },
      { atS: 20_000, fault: 'sensor-drift', on: false },
      { atS: 20_200, fault: 'valve-leak-through', on: true },
    ],
  },
];

/** Numeric columns of a trace, true state (no noise) and the reading's values. */
export const NUMBER_COLUMNS = [
  'airC',
  'productC',
  'coilC',
  'coilInletC',
  'suctionKPaAbs',
  'suctionKPaG',
  'superheatK',
  'suctionLineC',
  'liquidKPaAbs',
  'liquidLineC',
  'frostKg',
  'inventoryJ',
  'valveFraction',
  'readBoxAirC',
  'readSuctionKPaG',
  'readSuctionLineC',
  'readLiquidKPaG',
] as const;
/** Boolean columns, packed one bit each (in this order) into `flags`. */
export const FLAG_COLUMNS = ['compressorOn', 'fanOn', 'defrostOn', 'heaterOn', 'doorOpen', 'call', 'feedOpen'] as const;

export type NumberColumn = (typeof NUMBER_COLUMNS)[number];

export interface GoldenTrace {
  name: string;
  tS: number[];
  numbers: Record<NumberColumn, number[]>;
  /** EEV steps (null for a TXV box), exact. */
  valveSteps: Array<number | null>;
  flags: number[];
  compressorStarts: number;
  compressorRunS: number;
  defrosts: Array<{ startS: number; endS: number; reason: string }>;
}

const round = (x: number): number => {
  const f = 10 ** DECIMALS;
  return Math.round(x * f) / f + 0;
};

/** Runs one case and samples it every GOLDEN_SAMPLE_S. */
export function traceCase(c: GoldenCase): GoldenTrace {
  const model = new BoxModel(boxParams(c.identity), c.seed);
  const numbers = Object.fromEntries(NUMBER_COLUMNS.map((k) => [k, [] as number[]])) as Record<NumberColumn, number[]>;
  const out: GoldenTrace = { name: c.name, tS: [], numbers, valveSteps: [], flags: [], compressorStarts: 0, compressorRunS: 0, defrosts: [] };
  const pending = [...c.faults].sort((a, b) => a.atS - b.atS);
  const samples = Math.round((c.hours * 3600) / GOLDEN_SAMPLE_S);
  for (let i = 1; i <= samples; i++) {
    model.step(GOLDEN_SAMPLE_S);
    while (pending.length > 0 && (pending[0]?.atS ?? Infinity) <= model.tS + 1e-9) {
      const f = pending.shift();
      if (f) model.setFault(f.fault, f.on, f.sensor);
    }
    const r = model.reading();
    const p = model.phys;
    const row: Record<NumberColumn, number> = {
      airC: p.airC,
      productC: p.productC,
      coilC: p.coilC,
      coilInletC: p.coilInletC,
      suctionKPaAbs: p.suctionKPaAbs,
      suctionKPaG: model.suctionKPaG,
      superheatK: model.superheatK,
      suctionLineC: p.suctionLineC,
      liquidKPaAbs: p.liquidKPaAbs,
      liquidLineC: p.liquidLineC,
      frostKg: p.frostKg,
      inventoryJ: p.inventoryJ,
      valveFraction: model.valveFraction,
      readBoxAirC: r.boxAirC,
      readSuctionKPaG: r.suctionKPaG,
      readSuctionLineC: r.suctionLineC,
      readLiquidKPaG: r.liquidKPaG ?? Number.NaN,
    };
    out.tS.push(round(model.tS));
    for (const k of NUMBER_COLUMNS) numbers[k].push(round(row[k]));
    out.valveSteps.push(model.valveSteps ?? null);
    const flags = [model.compressorOn, model.fanOn, model.defrostOn, model.heaterOn, p.doorOpen, model.call, model.feedOpen];
    out.flags.push(flags.reduce((acc, on, bit) => acc | ((on ? 1 : 0) << bit), 0));
  }
  out.compressorStarts = model.compressorStarts;
  out.compressorRunS = round(model.compressorRunS);
  out.defrosts = model.defrost.history.map((d) => ({ startS: round(d.startS), endS: round(d.endS), reason: d.reason }));
  return out;
}

if (process.argv[1] === fileURLToPath(import.meta.url) && process.argv.includes('--write')) {
  const traces = GOLDEN_CASES.map(traceCase);
  writeFileSync(GOLDEN_FIXTURE, `${JSON.stringify({ sampleS: GOLDEN_SAMPLE_S, decimals: DECIMALS, traces })}\n`);
  console.log(`wrote ${GOLDEN_FIXTURE}`);
}
