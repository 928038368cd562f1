/**
 * Readings a controller holds until the broker has acknowledged them. Bounded: at the bound the
 * oldest reading is dropped (and reported through onDrop), so a long outage loses the oldest data,
 * never the newest, and memory stays fixed.
 */
import type { TelemetryPayload } from '../shared/schemas/telemetry';

/** Buffer bound for 24 h of readings at an interval in seconds (state-change readings share it). */
export function bufferBoundFor24h(intervalS: number): number {
  return Math.max(1, Math.ceil(86_400 / intervalS));
}

/** FIFO of readings with a fixed capacity; order is seq order because readings are pushed in seq order. */
export class ReadingBuffer {
  private items: TelemetryPayload[] = [];
  private head = 0;
  dropped = 0;

  constructor(
    readonly capacity: number,
    private readonly onDrop: (reading: TelemetryPayload, totalDropped: number) => void = () => {},
  ) {
    if (!Number.isInteger(capacity) || capacity < 1) throw new RangeError('buffer capacity must be a positive integer');
  }

  /** Number of readings waiting. */
  get size(): number {
    return this.items.length - this.head;
  }

  /** Appends a reading; drops (and reports) the oldest when full. Seq must increase. */
  push(reading: TelemetryPayload): void {
    const last = this.items[this.items.length - 1];
    if (this.size > 0 && last !== undefined && reading.seq <= last.seq) {
      throw new RangeError(`seq ${reading.seq} does not follow ${last.seq}`);
    }
    if (this.size >= this.capacity) {
      const oldest = this.items[this.head];
      this.head += 1;
      this.dropped += 1;
      if (oldest) this.onDrop(oldest, this.dropped);
    }
    this.items.push(reading);
    this.compact();
  }

  /** The oldest waiting reading, left in place (it is removed only once acknowledged). */
  peek(): TelemetryPayload | undefined {
    return this.size > 0 ? this.items[this.head] : undefined;
  }

  /** Removes the oldest reading if it is the one with this seq (acknowledged); false otherwise. */
  ack(seq: number): boolean {
    const first = this.peek();
    if (!first || first.seq !== seq) return false;
    this.head += 1;
    this.compact();
    return true;
  }

  /** Waiting readings, oldest first (a copy). */
  toArray(): TelemetryPayload[] {
    return this.items.slice(this.head);
  }

  private compact(): void {
    if (this.head > 1024 && this.head * 2 > this.items.length) {
      this.items = this.items.slice(this.head);
      this.head = 0;
    }
  }
}
