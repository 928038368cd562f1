/**
 * The broker journal (server/mqtt/journalPersistence.ts) driven directly: incoming publishes
 * journalled before their PUBACK, wills kept by compaction, a failed compaction, short writes, a
 * multi-MB journal read as a stream, the size bound and the directory sync after the rename.
 */
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import * as fs from 'node:fs';
import { open } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { JournalPersistence, type JournalOptions } from '../../server/mqtt/journalPersistence';
import type { StoredPacket } from 'aedes-persistence/asyncPersistence.js';

vi.mock('node:fs', async (importOriginal) => {
  const m = await importOriginal<typeof import('node:fs')>();
  return { ...m, openSync: vi.fn(m.openSync), fsyncSync: vi.fn(m.fsyncSync), readFileSync: vi.fn(m.readFileSync) };
});

const TOPIC = 'rimehold/v1/ctl/T-journal/telemetry';
const tmpDir = () => mkdtempSync(path.join(os.tmpdir(), 'rimehold-journal-'));
const journalFile = (dir: string) => path.join(dir, 'broker-journal.jsonl');
const payload = (seq: number) => Buffer.from(JSON.stringify({ seq }));

async function started(o: JournalOptions): Promise<JournalPersistence> {
  const j = new JournalPersistence(o);
  await j.setup({ id: 'test-broker' });
  return j;
}

function packet(topic: string, body: Buffer, messageId?: number): StoredPacket {
  return { cmd: 'publish', brokerId: 'test-broker', brokerCounter: 1, topic, payload: body, qos: 1, retain: false, dup: false, ...(messageId ? { messageId } : {}) };
}

describe('broker journal', () => {
  it('has an incoming publish on disk when appendIncoming resolves and hands it back after a restart until a queue holds it', async () => {
    const dir = tmpDir();
    const a = await started({ dir });
    await a.appendIncoming('ctl-T-journal', TOPIC, payload(1));
    await a.appendIncoming('ctl-T-journal', TOPIC, payload(2));
    expect(fs.readFileSync(journalFile(dir), 'utf8').split('\n').filter((l) => l.includes('"o":"in"'))).toHaveLength(2);
    // Simulated crash: no destroy, the next store reads what is on disk.
    const b = await started({ dir });
    expect(b.unsettledIncoming().map((m) => m.payload.toString())).toEqual([payload(1).toString(), payload(2).toString()]);
    // Seq 1 reaches the ingest's queue, seq 2 is published to nobody (the 'publish' event settles it).
    await b.outgoingEnqueueCombi([{ clientId: 'rimehold-ingest' }], packet(TOPIC, payload(1)));
    b.settleIncoming(TOPIC, payload(2));
    await b.destroy();
    const c = await started({ dir });
    expect(c.unsettledIncoming()).toEqual([]);
    await c.destroy();
  });

  it('keeps last wills through compaction and a restart', async () => {
    const dir = tmpDir();
    const a = await started({ dir });
    await a.putWill({ id: 'ctl-T-will' }, packet('rimehold/v1/ctl/T-will/status', Buffer.from('{"online":false}')));
    await a.destroy();
    // Each start compacts: two restarts replay a journal that is only a snapshot.
    await (await started({ dir })).destroy();
    const c = await started({ dir });
    const will = (await (c as unknown as { getWill(client: { id: string }): Promise<StoredPacket | undefined> }).getWill({ id: 'ctl-T-will' }));
    expect(will?.payload.toString()).toBe('{"online":false}');
    await c.destroy();
  });

  it('goes on writing in the old journal when a compaction fails, without a hanging write or a crash', async () => {
    const dir = tmpDir();
    const errors: unknown[] = [];
    // A directory where the snapshot file goes: opening it for writing fails.
    mkdirSync(path.join(dir, 'broker-journal.jsonl.tmp'));
    const a = await started({ dir, compactBytes: 2000, onError: (e) => errors.push(e) });
    expect(a.compactionFailures).toBe(1);
    mkdirSync(path.join(dir, 'broker-journal.jsonl.tmp'));
    for (let i = 0; i < 40; i++) await a.appendIncoming('ctl-T-journal', TOPIC, payload(i));
    // The later compaction fails too; every write resolved and the next ones do as well.
    await vi.waitFor(() => expect(a.compactionFailures).toBeGreaterThanOrEqual(2));
    await a.appendIncoming('ctl-T-journal', TOPIC, payload(40));
    expect(errors.length).toBeGreaterThanOrEqual(2);
    const b = await started({ dir });
    expect(b.unsettledIncoming()).toHaveLength(41);
    await b.destroy();
  });

  it('writes every byte when the file system takes a write only in part', async () => {
    const dir = tmpDir();
    const probe = await open(path.join(dir, 'probe'), 'w');
    const proto = Object.getPrototypeOf(probe) as { write: (...args: unknown[]) => Promise<unknown> };
    await probe.close();
    const write = proto.write;
    // At most 7 bytes per call, as a file system may do.
    proto.write = function shortWrite(this: unknown, buf: unknown, off: unknown, len: unknown, ...rest: unknown[]) {
      if (typeof buf === 'string') return write.call(this, buf.slice(0, 7));
      return Buffer.isBuffer(buf) && typeof len === 'number' ? write.call(this, buf, off, Math.min(len, 7), ...rest) : write.call(this, buf, off, len, ...rest);
    };
    try {
      const a = await started({ dir });
      for (let i = 0; i < 20; i++) await a.appendIncoming('ctl-T-journal', TOPIC, payload(i));
      await a.destroy();
    } finally {
      proto.write = write;
    }
    const b = await started({ dir });
    expect(b.unsettledIncoming().map((m) => JSON.parse(m.payload.toString()) as { seq: number }).map((p) => p.seq)).toEqual([...Array(20).keys()]);
    await b.destroy();
  });

  it('replays a multi-MB journal line by line, skipping a torn last line', async () => {
    const dir = tmpDir();
    const body = 'x'.repeat(3000);
    const lines: string[] = [];
    for (let i = 0; i < 3000; i++) lines.push(JSON.stringify({ o: 'in', c: 'ctl-T-journal', t: TOPIC, p: { $b64: Buffer.from(`${i}:${body}`).toString('base64') } }));
    writeFileSync(journalFile(dir), `${lines.join('\n')}\n{"o":"in","c":"ctl-T-jou`);
    expect(fs.statSync(journalFile(dir)).size).toBeGreaterThan(10 * 2 ** 20);
    vi.mocked(fs.readFileSync).mockClear();
    const a = await started({ dir });
    // Read as a stream, never as one string (a journal past V8's string limit must still start).
    expect(vi.mocked(fs.readFileSync).mock.calls.filter(([p]) => p === journalFile(dir))).toEqual([]);
    expect(a.unsettledIncoming()).toHaveLength(3000);
    expect(a.unsettledIncoming()[2999]?.payload.toString().startsWith('2999:')).toBe(true);
    await a.destroy();
  });

  it('refuses incoming telemetry once the journal passes its size bound, and accepts it again once a compaction shrinks it', async () => {
    const dir = tmpDir();
    const a = await started({ dir, maxBytes: 4096, compactBytes: 1 << 30, fullCompactIntervalMs: 0 });
    let n = 0;
    while (n < 1000 && a.acceptsIncoming()) await a.appendIncoming('ctl-T-journal', TOPIC, payload(n++));
    expect(a.acceptsIncoming()).toBe(false);
    expect(a.journalBytes).toBeGreaterThanOrEqual(4096);
    expect(n).toBeGreaterThan(10);
    expect(n).toBeLessThan(1000);
    // All of them reach the ingest's queue and are acknowledged: the next snapshot is small.
    for (let i = 0; i < n; i++) {
      await a.outgoingEnqueueCombi([{ clientId: 'rimehold-ingest' }], { ...packet(TOPIC, payload(i)), brokerCounter: i + 1 });
      await a.outgoingUpdate({ id: 'rimehold-ingest' }, { ...packet(TOPIC, payload(i), i + 1), brokerCounter: i + 1 });
      await a.outgoingClearMessageId({ id: 'rimehold-ingest' }, { messageId: i + 1 });
    }
    // Still over the bound until the compaction that a refusal starts has run.
    await vi.waitFor(() => expect(a.acceptsIncoming()).toBe(true));
    expect(a.journalBytes).toBeLessThan(4096);
    await a.destroy();
  });

  it('syncs the directory after the compaction rename', async () => {
    const dir = tmpDir();
    const openSync = vi.mocked(fs.openSync);
    const fsyncSync = vi.mocked(fs.fsyncSync);
    openSync.mockClear();
    fsyncSync.mockClear();
    const a = await started({ dir });
    const dirOpen = openSync.mock.calls.findIndex(([p, flags]) => p === dir && flags === 'r');
    expect(dirOpen).toBeGreaterThanOrEqual(0);
    expect(fsyncSync.mock.calls.map(([fd]) => fd)).toContain(openSync.mock.results[dirOpen]?.value);
    await a.destroy();
  });
});
