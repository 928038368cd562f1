// Throughput of the refrigerant engine on one core: saturationTemperature (goal >= 5 M conversions/s)
// and saturationPressure. Inputs are spread over every refrigerant, both curves and each curve's
// whole range; results are accumulated into a checksum so the work cannot be optimised away.
import {
  REFRIGERANT_IDS,
  getRefrigerant,
  saturationPressure,
  saturationTemperature,
  type RefrigerantId,
  type SaturationCurveName,
} from '../../shared/refrigerants/index';

const GOAL_PER_S = 5_000_000;
const INPUTS = 1 << 16; // distinct (refrigerant, curve, value) triples, cycled through
const ROUNDS = 7;
const CALLS_PER_ROUND = 20_000_000;

interface Inputs {
  ids: RefrigerantId[];
  curves: SaturationCurveName[];
  values: Float64Array;
}

// Small deterministic PRNG (mulberry32) so runs are comparable.
function prng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function makeInputs(kind: 'pressure' | 'temperature'): Inputs {
  const rnd = prng(kind === 'pressure' ? 1 : 2);
  const ids: RefrigerantId[] = [];
  const curves: SaturationCurveName[] = [];
  const values = new Float64Array(INPUTS);
  for (let i = 0; i < INPUTS; i++) {
    const id = REFRIGERANT_IDS[Math.floor(rnd() * REFRIGERANT_IDS.length)] ?? 'R-404A';
    const curve: SaturationCurveName = rnd() < 0.5 ? 'dew' : 'bubble';
    const info = getRefrigerant(id);
    if (kind === 'pressure') {
      const { min, max } = info.validPressureKPaAbs[curve];
      values[i] = min * Math.pow(max / min, rnd());
    } else {
      values[i] = info.validRange.minC + rnd() * (info.validRange.maxC - info.validRange.minC);
    }
    ids.push(id);
    curves.push(curve);
  }
  return { ids, curves, values };
}

function runTemperature(inp: Inputs, calls: number): number {
  let acc = 0;
  const mask = INPUTS - 1;
  for (let i = 0; i < calls; i++) {
    const j = i & mask;
    acc += saturationTemperature(inp.ids[j]!, inp.values[j]!, inp.curves[j]!);
  }
  return acc;
}

function runPressure(inp: Inputs, calls: number): number {
  let acc = 0;
  const mask = INPUTS - 1;
  for (let i = 0; i < calls; i++) {
    const j = i & mask;
    acc += saturationPressure(inp.ids[j]!, inp.values[j]!, inp.curves[j]!);
  }
  return acc;
}

function measure(name: string, run: (calls: number) => number): number {
  run(2_000_000); // warm-up so the JIT has optimised the call path
  const rates: number[] = [];
  let checksum = 0;
  for (let r = 0; r < ROUNDS; r++) {
    const t0 = performance.now();
    checksum += run(CALLS_PER_ROUND);
    const s = (performance.now() - t0) / 1000;
    rates.push(CALLS_PER_ROUND / s);
  }
  rates.sort((a, b) => a - b);
  const median = rates[Math.floor(rates.length / 2)] ?? 0;
  const best = rates[rates.length - 1] ?? 0;
  console.log(
    `${name.padEnd(22)} median ${(median / 1e6).toFixed(1)} M/s, best ${(best / 1e6).toFixed(1)} M/s ` +
      `(${ROUNDS} rounds x ${CALLS_PER_ROUND / 1e6} M calls, checksum ${checksum.toExponential(6)})`,
  );
  return median;
}

const pIn = makeInputs('pressure');
const tIn = makeInputs('temperature');
console.log(`refrigerant engine benchmark: ${REFRIGERANT_IDS.length} refrigerants, both curves, one core (${process.version})`);
const tRate = measure('saturationTemperature', (n) => runTemperature(pIn, n));
measure('saturationPressure', (n) => runPressure(tIn, n));
const verdict = tRate >= GOAL_PER_S ? 'meets' : 'MISSES';
console.log(`saturationTemperature ${verdict} the goal of ${GOAL_PER_S / 1e6} M conversions/s`);
if (tRate < GOAL_PER_S) process.exitCode = 1;
