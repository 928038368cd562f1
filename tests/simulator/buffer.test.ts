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
});
