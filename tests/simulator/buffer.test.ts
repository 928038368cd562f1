import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { TelemetryPayload } from '../../shared/schemas/telemetry';
import { bufferBoundFor24h, ReadingBuffer } from '../../simulator/buffer';

function reading(seq: number): TelemetryPayload {
  return {
    seq,
    ts: new Date(Date.UTC(2026, 0, 1) + seq * 10_000).toISOString(),
    suctionKPaG: 400,
    suctionLineC: 0,
    boxAirC: 3,
    compressorOn: true,
    fanOn: true,
    defrostOn: false,
    doorOpen: false,
  };
}

describe('ReadingBuffer', () => {
  it('holds 24 h of readings at the interval', () => {
    expect(bufferBoundFor24h(10)).toBe(8640);
    expect(bufferBoundFor24h(60)).toBe(1440);
  });

  it('replays in seq order and keeps seq and ts of each reading', () => {
    const buf = new ReadingBuffer(100);
    for (let s = 5; s < 25; s++) buf.push(reading(s));
    const replayed: TelemetryPayload[] = [];
    for (let r = buf.peek(); r; r = buf.peek()) {
      replayed.push(r);
      expect(buf.ack(r.seq)).toBe(true);
    }
    expect(replayed.map((r) => r.seq)).toEqual(Array.from({ length: 20 }, (_, i) => i + 5));
    expect(replayed[0]?.ts).toBe(reading(5).ts);
    expect(buf.size).toBe(0);
  });

  it('drops the oldest at the bound and reports each drop', () => {
    const dropped: number[] = [];
    const buf = new ReadingBuffer(3, (r) => dropped.push(r.seq));
    for (let s = 0; s < 7; s++) buf.push(reading(s));
    expect(buf.toArray().map((r) => r.seq)).toEqual([4, 5, 6]);
    expect(dropped).toEqual([0, 1, 2, 3]);
    expect(buf.dropped).toBe(4);
  });

  it('leaves an unacknowledged reading at the head (a lost PUBACK means it is sent again)', () => {
    const buf = new ReadingBuffer(10);
    buf.push(reading(1));
    buf.push(reading(2));
    expect(buf.ack(2)).toBe(false);
    expect(buf.peek()?.seq).toBe(1);
  });

  it('refuses a seq that does not increase', () => {
    const buf = new ReadingBuffer(10);
    buf.push(reading(3));
    expect(() => buf.push(reading(3))).toThrow(RangeError);
  });

  it('for any interleaving of pushes and acks, what leaves plus what waits plus what was dropped is every seq once, in order', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 50 }), fc.array(fc.boolean(), { maxLength: 400 }), (capacity, ops) => {
        const dropped: number[] = [];
        const buf = new ReadingBuffer(capacity, (r) => dropped.push(r.seq));
        const sent: number[] = [];
        let next = 0;
        for (const push of ops) {
          if (push) buf.push(reading(next++));
          else {
            const head = buf.peek();
            if (head && buf.ack(head.seq)) sent.push(head.seq);
          }
          expect(buf.size).toBeLessThanOrEqual(capacity);
        }
        const waiting = buf.toArray().map((r) => r.seq);
        expect([...sent, ...dropped, ...waiting].sort((a, b) => a - b)).toEqual(Array.from({ length: next }, (_, i) => i));
        const leaving = [...sent, ...waiting];
        expect(leaving).toEqual([...leaving].sort((a, b) => a - b));
      }),
    );
  });

  describe('with a hold time (waiting for Rimehold to name a reading committed)', () => {
    it('holds a PUBACKed reading, forgets it once confirmed, and lets it go unconfirmed after the hold time', () => {
      const buf = new ReadingBuffer(10, undefined, 1000);
      for (let s = 1; s <= 3; s++) buf.push(reading(s));
      expect(buf.ack(1, 0)).toBe(true);
      expect(buf.ack(2, 500)).toBe(true);
      expect([buf.size, buf.waiting, buf.held]).toEqual([3, 1, 2]);
      expect(buf.heldSeqs()).toEqual([1, 2]);
      expect(buf.peek()?.seq).toBe(3);
      expect(buf.confirm([2, 99])).toBe(1);
      expect(buf.heldSeqs()).toEqual([1]);
      expect(buf.release(999)).toBe(0);
      expect(buf.release(1000)).toBe(1);
      expect([buf.size, buf.held, buf.released]).toEqual([1, 0, 1]);
    });

    it('on a new connection sends the held readings again first, oldest first, and a resend is not a first PUBACK', () => {
      const buf = new ReadingBuffer(10, undefined, 60_000);
      for (let s = 1; s <= 5; s++) buf.push(reading(s));
      for (const s of [1, 2, 3]) buf.ack(s, 0);
      buf.confirm([2]);
      expect(buf.requeue()).toBe(2);
      const order: number[] = [];
      const first: boolean[] = [];
      for (let r = buf.peek(); r; r = buf.peek()) {
        order.push(r.seq);
        first.push(buf.ack(r.seq, 1));
      }
      expect(order).toEqual([1, 3, 4, 5]);
      expect(first).toEqual([false, false, true, true]);
    });

    it('counts the PUBACK of a reading named committed while it was in flight as its first', () => {
      const buf = new ReadingBuffer(10, undefined, 60_000);
      buf.push(reading(1));
      buf.push(reading(2));
      expect(buf.peek()?.seq).toBe(1);
      buf.confirm([1]); // the ingest was quicker than the broker's PUBACK
      expect(buf.ack(1, 0)).toBe(true);
      expect(buf.ack(1, 0)).toBe(false);
      expect(buf.peek()?.seq).toBe(2);
      expect([buf.size, buf.held]).toEqual([1, 0]);
    });

    it('at the bound lets the oldest held reading go before any waiting one is dropped', () => {
      const dropped: number[] = [];
      const buf = new ReadingBuffer(3, (r) => dropped.push(r.seq), 60_000);
      for (let s = 1; s <= 3; s++) buf.push(reading(s));
      buf.ack(1, 0);
      buf.push(reading(4));
      expect([buf.released, buf.dropped]).toEqual([1, 0]);
      buf.push(reading(5));
      expect(dropped).toEqual([2]);
    });

    it('for any interleaving of pushes, PUBACKs, confirmations, reconnects and time, every seq is kept, confirmed, let go or dropped exactly once', () => {
      const op = fc.oneof(fc.constant('push' as const), fc.constant('ack' as const), fc.constant('requeue' as const), fc.integer({ min: 0, max: 3000 }).map((ms) => ({ wait: ms })), fc.nat().map((k) => ({ confirm: k })));
      fc.assert(
        fc.property(fc.integer({ min: 1, max: 30 }), fc.array(op, { maxLength: 300 }), (capacity, ops) => {
          const dropped: number[] = [];
          const holdMs = 5000;
          const buf = new ReadingBuffer(capacity, (r) => dropped.push(r.seq), holdMs);
          const confirmed: number[] = [];
          const ackedAt = new Map<number, number>();
          const lastAckAt = new Map<number, number>();
          let now = 0;
          let next = 0;
          for (const o of ops) {
            if (o === 'push') buf.push(reading(next++));
            else if (o === 'ack') {
              const head = buf.peek();
              if (head) {
                if (buf.ack(head.seq, now)) ackedAt.set(head.seq, now);
                lastAckAt.set(head.seq, now);
              }
            } else if (o === 'requeue') {
              buf.requeue();
              // After a reconnect, sending starts from the oldest reading kept.
              const kept = [...buf.heldSeqs(), ...buf.toArray().map((r) => r.seq)].sort((a, b) => a - b);
              expect(buf.peek()?.seq).toBe(kept[0]);
            } else if ('wait' in o) {
              now += o.wait;
              buf.release(now);
            } else {
              const held = buf.heldSeqs();
              const pick = held[o.confirm % Math.max(1, held.length)];
              if (pick !== undefined && buf.confirm([pick]) === 1) confirmed.push(pick);
            }
            expect(buf.size).toBeLessThanOrEqual(capacity);
            expect(buf.held + buf.waiting).toBe(buf.size);
          }
          const kept = [...buf.heldSeqs(), ...buf.toArray().map((r) => r.seq)];
          expect(kept).toEqual([...kept].sort((a, b) => a - b));
          // Whatever is neither kept, confirmed nor dropped was let go, and only after reaching a broker.
          const accounted = new Set([...kept, ...confirmed, ...dropped]);
          const letGo = Array.from({ length: next }, (_, i) => i).filter((q) => !accounted.has(q));
          expect(letGo.length).toBe(buf.released);
          for (const q of letGo) expect(ackedAt.has(q)).toBe(true);
          expect(accounted.size + letGo.length).toBe(next);
          // Time moves only where release() runs, so nothing held was acknowledged a hold time ago or more.
          for (const q of buf.heldSeqs()) expect(now - (lastAckAt.get(q) ?? -Infinity)).toBeLessThan(holdMs);
        }),
      );
    });
  });
});
