/**
 * A durable broker store: aedes-persistence's in-memory store, with every change appended to a
 * journal file on disk (group commit, fdatasync) and replayed at start. It replaces
 * aedes-persistence-level, which under load left some QoS 1 messages of a connected session in its
 * stored queue until the session reconnected (seen in bench:ingest as multi-second stalls).
 *
 * Durability: a publish is acknowledged by aedes only after outgoingEnqueueCombi resolves, which
 * here waits for the journal write and fdatasync. Acknowledgements and deliveries are journalled
 * without waiting: losing one at a crash means a message is delivered again (the ingest stores a
 * re-delivered reading once), never that one is lost. The journal is compacted into a snapshot of
 * the current state at start and whenever it grows past `compactBytes`.
 * Not kept across restarts: QoS 2 in-flight state (no Rimehold client uses QoS 2).
 */
import { closeSync, existsSync, fsyncSync, mkdirSync, openSync, readFileSync, renameSync, writeSync } from 'node:fs';
import { open, type FileHandle } from 'node:fs/promises';
import path from 'node:path';
import MemoryPersistence, { type ClientRef, type StoredPacket, type StoredSub } from 'aedes-persistence/asyncPersistence.js';

type Rec =
  | { o: 'ret'; p: StoredPacket }
  | { o: 'sub+'; c: string; s: StoredSub[] }
  | { o: 'sub-'; c: string; t: string[] }
  | { o: 'subx'; c: string }
  | { o: 'out+'; c: string[]; p: StoredPacket }
  | { o: 'outu'; c: string; p: StoredPacket }
  | { o: 'outx'; c: string; m: number }
  | { o: 'will'; c: string; p: StoredPacket }
  | { o: 'willx'; c: string };

const encode = (r: Rec) => JSON.stringify(r, (_k, v: unknown) => (v && typeof v === 'object' && (v as { type?: string }).type === 'Buffer' && Array.isArray((v as { data?: unknown }).data) ? { $b64: Buffer.from((v as { data: number[] }).data).toString('base64') } : v));
const decode = (line: string) => JSON.parse(line, (_k, v: unknown) => (v && typeof v === 'object' && typeof (v as { $b64?: string }).$b64 === 'string' ? Buffer.from((v as { $b64: string }).$b64, 'base64') : v)) as Rec;

export interface JournalOptions {
  dir: string;
  /** Rewrite the journal as a snapshot when it grows past this (default 64 MiB). */
  compactBytes?: number;
  /** fdatasync each group commit (default true). */
  sync?: boolean;
}

export class JournalPersistence extends MemoryPersistence {
  private file: FileHandle | null = null;
  private readonly journalPath: string;
  private buffer: string[] = [];
  private waiters: Array<{ resolve: () => void; reject: (e: unknown) => void }> = [];
  private closed = false;
  private flushing = false;
  private scheduled = false;
  private bytes = 0;
  private replaying = false;
  private compacting: Promise<void> | null = null;
  /** Client ids that have (had) subscriptions or queued messages: the snapshot covers them. */
  private clientIds = new Set<string>();
  private willClients = new Set<string>();
  private retainedTopics = new Set<string>();
  /** Records written since start (tests, metrics). */
  records = 0;

  constructor(private readonly o: JournalOptions) {
    super();
    mkdirSync(o.dir, { recursive: true });
    this.journalPath = path.join(o.dir, 'broker-journal.jsonl');
  }

  override async setup(broker: unknown): Promise<void> {
    await super.setup(broker);
    await this.replay();
    await this.compact();
  }

  /** Applies the journal on disk to the in-memory store (nothing is journalled meanwhile). */
  private async replay(): Promise<void> {
    if (!existsSync(this.journalPath)) return;
    this.replaying = true;
    try {
      const lines = readFileSync(this.journalPath, 'utf8').split('\n');
      for (const line of lines) {
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
    }
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

  private async flush(): Promise<void> {
    this.scheduled = false;
    if (this.flushing || !this.file) return;
    this.flushing = true;
    while (this.buffer.length > 0 && this.file) {
      const chunk = this.buffer.join('');
      const waiters = this.waiters;
      this.buffer = [];
      this.waiters = [];
      try {
        await this.file.write(chunk);
        if (this.o.sync !== false) await this.file.datasync();
        this.bytes += Buffer.byteLength(chunk);
        for (const w of waiters) w.resolve();
      } catch (err) {
        // Not on disk: the publishes waiting on it are not acknowledged (the devices resend).
        for (const w of waiters) w.reject(err);
      }
    }
    this.flushing = false;
    if (this.bytes > (this.o.compactBytes ?? 64 * 2 ** 20) && !this.compacting) {
      this.compacting = this.compact().finally(() => {
        this.compacting = null;
      });
    }
  }

  /** Rewrites the journal as the records that rebuild the current state, then appends to it. */
  private async compact(): Promise<void> {
    while (this.flushing) await new Promise((r) => setImmediate(r));
    const old = this.file;
    this.file = null; // appends wait in the buffer meanwhile
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
    const tmp = `${this.journalPath}.tmp`;
    const fd = openSync(tmp, 'w');
    if (lines.length) writeSync(fd, `${lines.join('\n')}\n`);
    fsyncSync(fd);
    closeSync(fd);
    renameSync(tmp, this.journalPath);
    await old?.close();
    this.file = await open(this.journalPath, 'a');
    this.bytes = 0;
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
    this.willClients.add(client.id);
    await this.append({ o: 'will', c: client.id, p: packet });
  }

  override async delWill(client: ClientRef): Promise<StoredPacket | undefined> {
    const w = await super.delWill(client);
    this.willClients.delete(client.id);
    void this.append({ o: 'willx', c: client.id });
    return w;
  }

  override async destroy(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    while (this.flushing || (this.buffer.length && this.file)) {
      if (!this.flushing) await this.flush();
      else await new Promise((r) => setImmediate(r));
    }
    await this.file?.close();
    this.file = null;
    await super.destroy();
  }
}
