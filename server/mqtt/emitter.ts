/**
 * The embedded broker's message emitter: aedes's own mqemitter, with one change. Under overload
 * (its concurrency slots full, a long queue) mqemitter releases queued messages by synchronous
 * recursion, one stack frame set per message, and a deep enough queue ends in "Maximum call stack
 * size exceeded", which kills the process (seen in bench:ingest at 12,000 offered msg/s; an
 * open upstream report, mcollina/mqemitter PR #204). Here a release that is already
 * MAX_SYNC_DEPTH deep goes on at the next turn of the event loop instead; its slot stays taken
 * meanwhile, so new messages queue behind it and the order is kept.
 */
import mqemitter, { type MQEmitter } from 'mqemitter';

/** Nested deliveries before the emitter yields to the event loop (far below the default stack). */
export const MAX_SYNC_DEPTH = 200;

interface EmitterInternals {
  current: number;
  _do(message: unknown, callback: unknown): unknown;
}

export function createBrokerEmitter(concurrency: number): MQEmitter {
  // [MQTT-4.7.1-3]: aedes's own setting for the default emitter.
  const mq = mqemitter({ concurrency, matchEmptyLevels: true });
  const inner = mq as unknown as EmitterInternals;
  const original = inner._do.bind(mq);
  let depth = 0;
  inner._do = (message, callback) => {
    if (depth >= MAX_SYNC_DEPTH) {
      inner.current++;
      setImmediate(() => {
        inner.current--;
        inner._do(message, callback);
      });
      return mq;
    }
    depth++;
    try {
      return original(message, callback);
    } finally {
      depth--;
    }
  };
  return mq;
}
