/**
 * Readings a controller holds until Rimehold has them. A reading waits until the broker's PUBACK;
 * then, with a hold time, it is *held* until its seq comes back in a `committed` message (the
 * ingest has stored it), or until the hold time has passed. On every new connection the held
 * readings are sent again first, oldest first, so a broker that acknowledged a reading and then
 * lost it (a crash before its next save) gets it again; the ingest stores it once.
 * Bounded: at the bound the oldest reading goes (a waiting one is reported through onDrop), so a
 * long outage loses the oldest data, never the newest, and memory stays fixed.
 */
import type { TelemetryPayload } from '../shared/schemas/telemetry';

/** Buffer bound for 24 h of readings at an interval in seconds (state-change readings share it). */
export function bufferBoundFor24h(intervalS: number): number {
  return Math.max(1, Math.ceil(86_400 / intervalS));
}

interface Entry {
  reading: TelemetryPayload;
  /** When the broker acknowledged it (held), or null while it waits to be sent. */
  ackedAtMs: number | null;
  /** Acknowledged by the broker at least once (a resend is not a new publish). */
  everAcked: boolean;
}

/** Seq-ordered store of waiting and held readings with a fixed capacity; readings are pushed in seq order. */
export class ReadingBuffer {
  /** Every reading kept, by seq, in seq order (a Map keeps insertion order). Held ones come first. */
  private entries = new Map<number, Entry>();
  /** Seqs to send, oldest first; an entry gone or already acknowledged is skipped. */
  private queue: number[] = [];
  private head = 0;
  private heldCount = 0;
  /** Seqs named committed while their first PUBACK was still on its way (the ingest can be that quick). */
  private confirmedInFlight = new Set<number>();
  private lastSeq = -1;
  /** Waiting readings dropped at the bound (never acknowledged by the broker). */
  dropped = 0;
  /** Held readings let go without a confirmation (hold time passed, or pushed out at the bound). */
  released = 0;

  /**
   * @param holdMs how long a reading is held after its PUBACK waiting for `committed` (0: not held,
   *   the PUBACK ends it, as with a broker that acknowledges only what is on disk).
   */
  constructor(
    readonly capacity: number,
    private readonly onDrop: (reading: TelemetryPayload, totalDropped: number) => void = () => {},
    readonly holdMs = 0,
  ) {
    if (!Number.isInteger(capacity) || capacity < 1) throw new RangeError('buffer capacity must be a positive integer');
    if (!(holdMs >= 0)) throw new RangeError('hold time must be ≥ 0');
  }

  /** Readings kept: waiting to be sent plus held. */
  get size(): number {
    return this.entries.size;
  }

  /** Readings waiting to be sent. */
  get waiting(): number {
    return this.entries.size - this.heldCount;
  }

  /** Readings acknowledged by the broker and held until Rimehold confirms them. */
  get held(): number {
    return this.heldCount;
  }

  /** Appends a reading; at the bound the oldest one goes (reported when it was never sent). Seq must increase. */
  push(reading: TelemetryPayload): void {
    if (this.entries.size > 0 && reading.seq <= this.lastSeq) {
      throw new RangeError(`seq ${reading.seq} does not follow ${this.lastSeq}`);
    }
    if (this.entries.size >= this.capacity) this.dropOldest();
    this.entries.set(reading.seq, { reading, ackedAtMs: null, everAcked: false });
    this.queue.push(reading.seq);
    this.lastSeq = reading.seq;
  }

  /** The oldest reading still to be sent, left in place (it moves on only once acknowledged). */
  peek(): TelemetryPayload | undefined {
    while (this.head < this.queue.length) {
      const e = this.entries.get(this.queue[this.head] as number);
      if (e && e.ackedAtMs === null) return e.reading;
      this.head++;
    }
    this.compact();
    return undefined;
  }

  /**
   * The broker acknowledged the reading peek() gave, with this seq: it is held (or, without a hold
   * time, gone). Returns true for a reading's first PUBACK, false for a resend or any other seq.
   */
  ack(seq: number, nowMs = Date.now()): boolean {
    if (this.confirmedInFlight.delete(seq)) return true;
    const first = this.peek();
    if (!first || first.seq !== seq) return false;
    const e = this.entries.get(seq) as Entry;
    this.head++;
    const isFirst = !e.everAcked;
    e.everAcked = true;
    if (this.holdMs > 0) {
      e.ackedAtMs = nowMs;
      this.heldCount++;
    } else this.entries.delete(seq);
    this.compact();
    return isFirst;
  }

  /** Rimehold has these seqs: forget them (held or waiting). Returns how many were kept here. */
  confirm(seqs: readonly number[]): number {
    let n = 0;
    for (const seq of seqs) {
      const e = this.entries.get(seq);
      if (!e) continue;
      this.entries.delete(seq);
      if (e.ackedAtMs !== null) this.heldCount--;
      else if (!e.everAcked) {
        // Only a reading in flight can be committed before its PUBACK: that PUBACK is still its first.
        if (this.confirmedInFlight.size > 64) this.confirmedInFlight.clear();
        this.confirmedInFlight.add(seq);
      }
      n++;
    }
    return n;
  }

  /** Lets go of held readings acknowledged longer than the hold time ago. Returns how many. */
  release(nowMs = Date.now()): number {
    let n = 0;
    // Held readings are the oldest and were acknowledged in seq order, so they expire from the front.
    for (const [seq, e] of this.entries) {
      if (e.ackedAtMs === null || e.ackedAtMs > nowMs - this.holdMs) break;
      this.entries.delete(seq);
      this.heldCount--;
      this.released++;
      n++;
    }
    return n;
  }

  /** A new connection: every held reading is to be sent again, before the waiting ones. Returns how many. */
  requeue(): number {
    const again = this.heldCount;
    for (const e of this.entries.values()) e.ackedAtMs = null;
    this.heldCount = 0;
    this.queue = [...this.entries.keys()];
    this.head = 0;
    return again;
  }

  /** Waiting readings, oldest first (a copy). */
  toArray(): TelemetryPayload[] {
    return [...this.entries.values()].filter((e) => e.ackedAtMs === null).map((e) => e.reading);
  }

  /** Seqs of the held readings, oldest first. */
  heldSeqs(): number[] {
    return [...this.entries.values()].filter((e) => e.ackedAtMs !== null).map((e) => e.reading.seq);
  }

  private dropOldest(): void {
    const [seq, e] = this.entries.entries().next().value as [number, Entry];
    this.entries.delete(seq);
    if (e.ackedAtMs !== null) this.heldCount--;
    if (e.everAcked) {
      // It reached a broker once: let go unconfirmed rather than lost unsent.
      this.released++;
      return;
    }
    this.dropped++;
    this.onDrop(e.reading, this.dropped);
  }

  private compact(): void {
    if (this.head > 1024 && this.head * 2 > this.queue.length) {
      this.queue = this.queue.slice(this.head);
      this.head = 0;
    }
  }
}
