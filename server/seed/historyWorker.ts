/**
 * Worker thread of the demo history seed: one database connection, boxes taken one at a time
 * from the main thread (`{ job }`), each answered with `{ done }` or `{ failed }`; `{ stop }` ends it.
 * The model is CPU-bound, so one worker per core is what makes 14 days × 24 boxes quick.
 */
import { parentPort, workerData } from 'node:worker_threads';
import type { HistoryJob } from './historyPlan';
import { openHistoryConnection, storeBoxHistory, type HistoryDb } from './historyStore';

/** A message from the main thread. */
export type ToWorker = { job: HistoryJob } | { stop: true };
/** A message to the main thread. */
export type FromWorker = { ready: true } | { done: import('./historyStore').BoxSeedResult } | { failed: { boxId: number; message: string } };

const port = parentPort;
if (port) {
  const conn = await openHistoryConnection(workerData as HistoryDb);
  port.on('message', (msg: ToWorker) => {
    if ('stop' in msg) {
      void conn.end().finally(() => port.close());
      return;
    }
    storeBoxHistory(conn, msg.job).then(
      (done) => port.postMessage({ done } satisfies FromWorker),
      (err: unknown) => port.postMessage({ failed: { boxId: msg.job.box.boxId, message: err instanceof Error ? err.message : String(err) } } satisfies FromWorker),
    );
  });
  port.postMessage({ ready: true } satisfies FromWorker);
}
