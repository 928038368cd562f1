/** The embedded broker's emitter under overload: a long queue drains without overflowing the stack, in order. */
import { describe, expect, it } from 'vitest';
import { createBrokerEmitter } from '../../server/mqtt/emitter';

describe('createBrokerEmitter', () => {
  it('delivers 50,000 queued messages in order, with a synchronous subscriber, without overflowing the stack', async () => {
    const mq = createBrokerEmitter(1);
    const got: number[] = [];
    let hold: (() => void) | null = null;
    mq.on('rimehold/t', (message, cb) => {
      const n = (message as unknown as { n: number }).n;
      got.push(n);
      // The first delivery is held, so every later message queues behind the one concurrency slot.
      if (n === 0) hold = cb;
      else cb();
    });
    const N = 50_000;
    let sent = 0;
    for (let n = 0; n < N; n++) mq.emit({ topic: 'rimehold/t', n } as never, () => sent++);
    expect(got).toEqual([0]);
    expect((mq as unknown as { length: number }).length).toBe(N - 1);
    (hold as unknown as () => void)();
    while (got.length < N) await new Promise((r) => setImmediate(r));
    expect(got.length).toBe(N);
    expect(got.every((v, i) => v === i)).toBe(true);
    await new Promise((r) => setImmediate(r));
    expect(sent).toBe(N);
  });
});
