// Speed of the simulator's box model on one core: one box stepped in 2-s steps (the largest step
// BoxModel.step takes, and the one the demo history seed uses) for BENCH_DAYS simulated days, a
// reading taken every BENCH_READ_S as the seed does over its coarse part. Prints µs per model step
// for a cooler and a freezer, and a checksum of the final states so the work cannot be skipped.
//   npm run bench:model                 (BENCH_DAYS=2, BENCH_READ_S=60)
//   node --cpu-prof --import tsx scripts/bench/model.ts   (a profile of the same run)
import { BoxModel } from '../../simulator/model/box';
import { boxParams, type BoxIdentity } from '../../simulator/model/params';

const DAYS = Number(process.env.BENCH_DAYS ?? 2);
const READ_S = Number(process.env.BENCH_READ_S ?? 60);
const STEP_S = 2;
/** 2026-01-05 00:00 UTC, a Monday: doors and deliveries follow the kitchen day. */
const START_MS = Date.UTC(2026, 0, 5);

const BOXES: Array<{ name: string; identity: BoxIdentity }> = [
  { name: 'cooler R-404A eev', identity: { kind: 'cooler', valveType: 'eev', refrigerant: 'R-404A', startEpochMs: START_MS } },
  { name: 'freezer R-448A eev', identity: { kind: 'freezer', valveType: 'eev', refrigerant: 'R-448A', startEpochMs: START_MS, elevationM: 180 } },
];

function run(identity: BoxIdentity, days: number): { usPerStep: number; steps: number; checksum: number } {
  const model = new BoxModel(boxParams(identity), 7);
  const steps = Math.round((days * 86_400) / STEP_S);
  const readEvery = Math.max(1, Math.round(READ_S / STEP_S));
  let checksum = 0;
  const t0 = process.hrtime.bigint();
  for (let i = 1; i <= steps; i++) {
    model.step(STEP_S);
    if (i % readEvery === 0) checksum += model.reading().boxAirC;
  }
  const elapsedNs = Number(process.hrtime.bigint() - t0);
  checksum += model.phys.airC + model.phys.suctionKPaAbs + model.compressorStarts;
  return { usPerStep: elapsedNs / 1000 / steps, steps, checksum };
}

// A short warm-up so the first box is not measured while the JIT compiles.
run(BOXES[0]!.identity, 0.25);
for (const b of BOXES) {
  const r = run(b.identity, DAYS);
  console.log(JSON.stringify({ box: b.name, days: DAYS, steps: r.steps, usPerStep: +r.usPerStep.toFixed(3), checksum: +r.checksum.toFixed(6) }));
}
