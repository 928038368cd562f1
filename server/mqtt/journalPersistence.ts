/**
 * A durable broker store: aedes-persistence's in-memory store, with every change appended to a
 * journal file on disk (group commit, fdatasync) and replayed at start. It replaces
 * aedes-persistence-level, which under load left some QoS 1 messages of a connected session in its
 * stored queue until the session reconnected (seen in bench:ingest as multi-second stalls).
 *
 * Durability: aedes 1.2 writes the PUBACK of a QoS 1 publish before it hands the message to the
 * store, so the broker's authorizePublish hook appends an "incoming" record (appendIncoming) and
 * waits for its fdatasync before it lets aedes go on. An incoming record is settled by the later
 * enqueue of the same topic + payload to a subscriber ('out+') or by an 'inx' record when nobody
 * subscribes; those still open at start are handed back by unsettledIncoming() for the broker to
 * publish again. Acknowledgements and deliveries are journalled without waiting: losing one at a
 * crash means a message is delivered again (the ingest stores a re-delivered reading once), never
 * that one is lost. The journal is compacted into a snapshot of the current state (retained
 * messages, subscriptions, queues, wills, open incoming records) at start and whenever it grows
 * past `compactBytes`; past `maxBytes` acceptsIncoming() is false and the broker refuses telemetry.
 * Not kept across restarts: QoS 2 in-flight state (no Rimehold client uses QoS 2).
 */
import { closeSync, createReadStream, existsSync, fsyncSync, mkdirSync, openSync, renameSync, rmSync, statSync, writeSync } from 'node:fs';
import { open, type FileHandle } from 'node:fs/promises';
import { createInterface } from 'node:readline';
import path from 'node:path';
import MemoryPersistence, { type ClientRef, type StoredPacket, type StoredSub } from 'aedes-persistence/asyncPersistence.js';

/** Default compaction threshold of the journal, bytes appended since the last snapshot. */
export const DEFAULT_COMPACT_BYTES = 64 * 2 ** 20;
/** Default size bound of the journal file, bytes: past it incoming telemetry is refused. */
export const DEFAULT_MAX_JOURNAL_BYTES = 512 * 2 ** 20;
/** While the journal is over its bound it is compacted at most this often, ms. */
const FULL_COMPACT_INTERVAL_MS = 10_000;

type Rec =
  | { o: 'ret'; p: StoredPacket }
  | { o: 'sub+'; c: string; s: StoredSub[] }
  | { o: 'sub-'; c: string; t: string[] }
  | { o: 'subx'; c: string }
  | { o: 'out+'; c: string[]; p: StoredPacket }
  | { o: 'outu'; c: string; p: StoredPacket }
  | { o: 'outx'; c: string; m: number }
  | { o: 'will'; c: string; p: StoredPacket }
  | { o: 'willx'; c: string }
  | { o: 'in'; c: string; t: string; p: Buffer }
  | { o: 'inx'; t: string; p: Buffer };

/** A publish whose PUBACK waited for its journal record and that no subscriber queue holds yet. */
export interface IncomingMessage {
  clientId: string;
  topic: string;
  payload: Buffer;
}

const encode = (r: Rec) => JSON.stringify(r, (_k, v: unknown) => (v && typeof v === 'object' && (v as { type?: string }).type === 'Buffer' && Array.isArray((v as { data?: unknown }).data) ? { $b64: Buffer.from((v as { data: number[] }).data).toString('base64') } : v));
const decode = (line: string) => JSON.parse(line, (_k, v: unknown) => (v && typeof v === 'object' && typeof (v as { $b64?: string }).$b64 === 'string' ? Buffer.from((v as { $b64: string }).$b64, 'base64') : v)) as Rec;

export interface JournalOptions {
  dir: string;
  /** Rewrite the journal as a snapshot when this many bytes were appended since the last (default 64 MiB). */
  compactBytes?: number;
  /** Size bound of the journal file in bytes: past it acceptsIncoming() is false (default 512 MiB). */
  maxBytes?: number;
  /** While over maxBytes, compact at most this often (ms, default 10 s). */
  fullCompactIntervalMs?: number;
  /** Told about a failed compaction (the journal goes on in the old file). */
  onError?: (err: unknown) => void;
  /** fdatasync each group commit (default true). */
  sync?: boolean;
}

const incomingKey = (topic: string, payload: Buffer) => `${topic}\u0000${payload.toString('base64')}`;

/** Writes all of buf at the end of fd, looping over short writes. */
function writeAllSync(fd: number, buf: Buffer): void {
  let off = 0;
  while (off < buf.length) off += writeSync(fd, buf, off, buf.length - off);
}

export class JournalPersistence extends MemoryPersistence {
  private file: FileHandle | null = null;
  private readonly journalPath: string;
  private buffer: string[] = [];
  private waiters: Array<{ resolve: () => void; reject: (e: unknown) => void }> = [];
  private closed = false;
  private flushing = false;
  private scheduled = false;
  /** Bytes appended since the last snapshot, and the size of the journal file. */
  private bytesSinceCompact = 0;
  private fileBytes = 0;
  private replaying = false;
  private compacting: Promise<void> | null = null;
  private lastCompactAt = 0;
  /** Client ids that have (had) subscriptions or queued messages: the snapshot covers them. */
  private clientIds = new Set<string>();
  /** The last will of each client, as stored (the snapshot keeps them). */
  private wills = new Map<string, StoredPacket>();
  private retainedTopics = new Set<string>();
  /** Open incoming records by topic + payload (several when a device sent the same message twice). */
  private incoming = new Map<string, IncomingMessage[]>();
  /** Records written since start (tests, metrics). */
  records = 0;
  /** Compactions that failed (the journal went on in the old file). */
  compactionFailures = 0;

  constructor(private readonly o: JournalOptions) {
    super();
    mkdirSync(o.dir, { recursive: true });
    this.journalPath = path.join(o.dir, 'broker-journal.jsonl');
  }

  override async setup(broker: unknown): Promise<void> {
    await super.setup(broker);
    await this.replay();
    await this.compact();
    if (!this.file) throw new Error(`broker journal ${this.journalPath} cannot be opened`);
  }

  /** Applies the journal on disk to the in-memory store, line by line (nothing is journalled meanwhile). */
  private async replay(): Promise<void> {
    if (!existsSync(this.journalPath)) return;
    this.replaying = true;
    try {
      const lines = createInterface({ input: createReadStream(this.journalPath, { encoding: 'utf8' }), crlfDelay: Infinity });
      for await (const line of lines) {
        if (!line) continue;
        let r: Rec;
        try {
          r = decode(line);
        } catch {
          continue; // a torn last line after a crash: everything before it is intact
        }
        await this.apply(r);
      }
    } finally {
      this.replaying = false;
    }
  }

  private async apply(r: Rec): Promise<void> {
    const c = (id: string): ClientRef => ({ id });
    switch (r.o) {
      case 'ret':
        return this.storeRetained(r.p);
      case 'sub+':
        return this.addSubscriptions(c(r.c), r.s);
      case 'sub-':
        return this.removeSubscriptions(c(r.c), r.t);
      case 'subx':
        return this.cleanSubscriptions(c(r.c));
      case 'out+':
        return this.outgoingEnqueueCombi(r.c.map((clientId) => ({ clientId })), r.p);
      case 'outu':
        return this.outgoingUpdate(c(r.c), r.p).catch(() => undefined);
      case 'outx':
        await this.outgoingClearMessageId(c(r.c), { messageId: r.m });
        return;
      case 'will':
        return this.putWill(c(r.c), r.p);
      case 'willx':
        await this.delWill(c(r.c));
        return;
      case 'in':
        return this.appendIncoming(r.c, r.t, r.p);
      case 'inx':
        this.settleIncoming(r.t, r.p);
        return;
    }
  }

  /** False while the journal file is past maxBytes: the broker refuses new telemetry then. */
  acceptsIncoming(): boolean {
    const pending = this.buffer.reduce((n, l) => n + Buffer.byteLength(l), 0);
    if (this.fileBytes + pending < (this.o.maxBytes ?? DEFAULT_MAX_JOURNAL_BYTES)) return true;
    // Over the bound: compact now and then, so the journal shrinks once the queues have drained.
    if (!this.compacting && !this.closed && Date.now() - this.lastCompactAt >= (this.o.fullCompactIntervalMs ?? FULL_COMPACT_INTERVAL_MS)) {
      this.compacting = this.compact().finally(() => {
        this.compacting = null;
      });
    }
    return false;
  }

  /** Size of the journal file in bytes, as written so far. */
  get journalBytes(): number {
    return this.fileBytes;
  }

  /** Journals a publish before it is acknowledged; resolves after its fdatasync (group commit). */
  appendIncoming(clientId: string, topic: string, payload: Buffer): Promise<void> {
    const key = incomingKey(topic, payload);
    const list = this.incoming.get(key) ?? [];
    list.push({ clientId, topic, payload });
    this.incoming.set(key, list);
    return this.append({ o: 'in', c: clientId, t: topic, p: payload });
  }

  /** Closes one open incoming record of this topic + payload; true if there was one. */
  private takeIncoming(topic: string, payload: Buffer): boolean {
    if (this.incoming.size === 0) return false;
    const key = incomingKey(topic, payload);
    const list = this.incoming.get(key);
    if (!list) return false;
    list.shift();
    if (list.length === 0) this.incoming.delete(key);
    return true;
  }

  /** The broker has handed the message on (no subscriber queued it): its incoming record is done. */
  settleIncoming(topic: string, payload: Buffer | string): void {
    if (this.incoming.size === 0) return;
    const body = Buffer.isBuffer(payload) ? payload : Buffer.from(payload);
    if (this.takeIncoming(topic, body)) void this.append({ o: 'inx', t: topic, p: body }).catch(() => undefined);
  }

  /** Incoming records that no queue holds yet (after a crash): the broker publishes them again. */
  unsettledIncoming(): IncomingMessage[] {
    return [...this.incoming.values()].flat();
  }

  /** Queues a record; resolves after it is on disk. */
  private append(r: Rec): Promise<void> {
    if (this.replaying) return Promise.resolve();
    // After destroy (aedes closing its clients) nothing is journalled any more.
    if (this.closed) return Promise.resolve();
    const line = `${encode(r)}\n`;
    this.buffer.push(line);
    this.records++;
    const done = new Promise<void>((resolve, reject) => this.waiters.push({ resolve, reject }));
    if (!this.scheduled) {
      this.scheduled = true;
      setImmediate(() => void this.flush());
    }
    return done;
  }

  /** Writes all of buf at the end of the journal, looping over short writes. */
  private async writeAll(file: FileHandle, buf: Buffer): Promise<void> {
    let off = 0;
    while (off < buf.length) {
      const { bytesWritten } = await file.write(buf, off, buf.length - off);
      off += bytesWritten;
    }
  }

  private async flush(): Promise<void> {
    this.scheduled = false;
    if (this.flushing || !this.file) return;
    this.flushing = true;
    while (this.buffer.length > 0 && this.file) {
      const chunk = Buffer.from(this.buffer.join(''));
      const waiters = this.waiters;
      this.buffer = [];
      this.waiters = [];
      try {
        await this.writeAll(this.file, chunk);
        if (this.o.sync !== false) await this.file.datasync();
        this.bytesSinceCompact += chunk.length;
        this.fileBytes += chunk.length;
        for (const w of waiters) w.resolve();
      } catch (err) {
        // Not on disk: the publishes waiting on it are not acknowledged (the devices resend).
        for (const w of waiters) w.reject(err);
      }
    }
    this.flushing = false;
    if (this.bytesSinceCompact > (this.o.compactBytes ?? DEFAULT_COMPACT_BYTES) && !this.compacting && !this.closed) {
      this.compacting = this.compact().finally(() => {
        this.compacting = null;
      });
    }
  }

  /** The records that rebuild the current state. */
  private async snapshot(): Promise<string[]> {
    const lines: string[] = [];
    for (const topic of this.retainedTopics) {
      for await (const p of this.createRetainedStream(topic)) lines.push(encode({ o: 'ret', p: p as StoredPacket }));
    }
    for (const id of this.clientIds) {
      const subs = await this.subscriptionsByClient({ id });
      if (subs.length) lines.push(encode({ o: 'sub+', c: id, s: subs }));
      for await (const p of this.outgoingStream({ id })) {
        const pkt = p as StoredPacket;
        lines.push(encode({ o: 'out+', c: [id], p: pkt }));
        if (pkt.messageId) lines.push(encode({ o: 'outu', c: id, p: pkt }));
      }
    }
    for (const [id, will] of this.wills) lines.push(encode({ o: 'will', c: id, p: will }));
    for (const m of this.unsettledIncoming()) lines.push(encode({ o: 'in', c: m.clientId, t: m.topic, p: m.payload }));
    return lines;
  }

  /**
   * Rewrites the journal as a snapshot, then appends to it. Never throws: on a failure the journal
   * goes on in the old file (appends made meanwhile are written there), and onError is told.
   */
  private async compact(): Promise<void> {
    while (this.flushing) await new Promise((r) => setImmediate(r));
    this.lastCompactAt = Date.now();
    const old = this.file;
    this.file = null; // appends wait in the buffer meanwhile
    const tmp = `${this.journalPath}.tmp`;
    let renamed = false;
    let snapshotBytes = 0;
    try {
      const body = Buffer.from((await this.snapshot()).map((l) => `${l}\n`).join(''));
      const fd = openSync(tmp, 'w');
      try {
        writeAllSync(fd, body);
        fsyncSync(fd);
      } finally {
        closeSync(fd);
      }
      renameSync(tmp, this.journalPath);
      renamed = true;
      snapshotBytes = body.length;
      // The rename is durable only once the directory entry is.
      const dirFd = openSync(this.o.dir, 'r');
      try {
        fsyncSync(dirFd);
      } finally {
        closeSync(dirFd);
      }
    } catch (err) {
      this.compactionFailures++;
      try {
        if (!renamed) rmSync(tmp, { force: true, recursive: true });
      } catch {
        // left for the next compaction, which overwrites or removes it
      }
      this.o.onError?.(err);
    }
    try {
      if (renamed || !old) {
        await old?.close().catch(() => undefined);
        this.file = await open(this.journalPath, 'a');
        this.fileBytes = renamed ? snapshotBytes : statSync(this.journalPath).size;
      } else {
        this.file = old;
      }
      this.bytesSinceCompact = 0;
    } catch (err) {
      // No journal to write to: the waiting publishes are refused rather than left hanging.
      this.o.onError?.(err);
      const waiters = this.waiters;
      this.buffer = [];
      this.waiters = [];
      for (const w of waiters) w.reject(err);
      return;
    }
    if (this.buffer.length) void this.flush();
  }

  override async storeRetained(packet: StoredPacket): Promise<void> {
    await super.storeRetained(packet);
    if (packet.payload.length === 0) this.retainedTopics.delete(packet.topic);
    else this.retainedTopics.add(packet.topic);
    await this.append({ o: 'ret', p: packet });
  }

  override async addSubscriptions(client: ClientRef, subs: StoredSub[]): Promise<void> {
    await super.addSubscriptions(client, subs);
    this.clientIds.add(client.id);
    await this.append({ o: 'sub+', c: client.id, s: subs.map((s) => ({ topic: s.topic, qos: s.qos, rh: s.rh, rap: s.rap, nl: s.nl })) });
  }

  override async removeSubscriptions(client: ClientRef, topics: string[]): Promise<void> {
    await super.removeSubscriptions(client, topics);
    await this.append({ o: 'sub-', c: client.id, t: topics });
  }

  override async cleanSubscriptions(client: ClientRef): Promise<void> {
    await super.cleanSubscriptions(client);
    await this.append({ o: 'subx', c: client.id });
  }

  override async outgoingEnqueue(sub: { clientId: string }, packet: StoredPacket): Promise<void> {
    await this.outgoingEnqueueCombi([sub], packet);
  }

  override async outgoingEnqueueCombi(subs: Array<{ clientId: string }>, packet: StoredPacket): Promise<void> {
    if (!subs || subs.length === 0) return;
    await super.outgoingEnqueueCombi(subs, packet);
    for (const s of subs) this.clientIds.add(s.clientId);
    // The queue now holds the message: its incoming record (if any) is settled by this one.
    this.takeIncoming(packet.topic, Buffer.from(packet.payload));
    await this.append({ o: 'out+', c: subs.map((s) => s.clientId), p: packet });
  }

  override async outgoingUpdate(client: ClientRef, packet: StoredPacket): Promise<void> {
    await super.outgoingUpdate(client, packet);
    void this.append({ o: 'outu', c: client.id, p: packet });
  }

  override async outgoingClearMessageId(client: ClientRef, packet: { messageId?: number }): Promise<StoredPacket | undefined> {
    const removed = await super.outgoingClearMessageId(client, packet);
    if (removed && packet.messageId !== undefined) void this.append({ o: 'outx', c: client.id, m: packet.messageId });
    return removed;
  }

  override async putWill(client: ClientRef, packet: StoredPacket): Promise<void> {
    await super.putWill(client, packet);
    this.wills.set(client.id, packet);
    await this.append({ o: 'will', c: client.id, p: packet });
  }

  override async delWill(client: ClientRef): Promise<StoredPacket | undefined> {
    const w = await super.delWill(client);
    this.wills.delete(client.id);
    void this.append({ o: 'willx', c: client.id });
    return w;
  }

  override async destroy(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await this.compacting;
    while (this.flushing || (this.buffer.length && this.file)) {
      if (!this.flushing) await this.flush();
      else await new Promise((r) => setImmediate(r));
    }
    await this.file?.close();
    this.file = null;
    await super.destroy();
  }
}
