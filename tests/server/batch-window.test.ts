// The ingest's batch window follows the load: about the recent commit time, within its bounds (our choice, server/telemetry/ingest.ts).
import { describe, expect, it } from 'vitest';
import { MIN_BATCH_WINDOW_MS, batchWindow } from '../../server/telemetry/ingest';

describe('batchWindow', () => {
  it('waits about as long as the recent commits took', () => {
    expect(batchWindow(8.4, 50)).toBe(8);
    expect(batchWindow(23, 50)).toBe(23);
  });
  it('never waits longer than the configured window, nor shorter than the floor', () => {
    expect(batchWindow(400, 50)).toBe(50);
    expect(batchWindow(0.3, 50)).toBe(MIN_BATCH_WINDOW_MS);
    expect(batchWindow(10, 5)).toBe(5);
  });
});
