declare module 'aedes-persistence-level/asyncPersistence.js' {
  /** aedes 1.x async persistence backed by a level database (>= 9). */
  export default class AsyncLevelPersistence {
    constructor(db: unknown);
    setup(broker: unknown): Promise<void>;
  }
}

declare module 'aedes-persistence/asyncPersistence.js' {
  import type { Readable } from 'node:stream';
  /** A publish packet as aedes stores it (aedes-packet). */
  export interface StoredPacket {
    cmd: string;
    brokerId: string;
    brokerCounter: number;
    topic: string;
    payload: Buffer;
    qos: number;
    retain: boolean;
    dup: boolean;
    messageId?: number;
    clientId?: string;
    [key: string]: unknown;
  }
  export interface StoredSub {
    topic: string;
    qos: number;
    clientId?: string;
    rh?: number;
    rap?: boolean;
    nl?: boolean;
  }
  export interface ClientRef {
    id: string;
  }
  /** aedes-persistence's in-memory store (aedes 1.x async API). */
  export default class MemoryPersistence {
    constructor(opts?: Record<string, unknown>);
    setup(broker: unknown): Promise<void>;
    storeRetained(packet: StoredPacket): Promise<void>;
    createRetainedStream(pattern: string): Readable;
    addSubscriptions(client: ClientRef, subs: StoredSub[]): Promise<void>;
    removeSubscriptions(client: ClientRef, topics: string[]): Promise<void>;
    subscriptionsByClient(client: ClientRef): Promise<StoredSub[]>;
    cleanSubscriptions(client: ClientRef): Promise<void>;
    outgoingEnqueue(sub: { clientId: string }, packet: StoredPacket): Promise<void>;
    outgoingEnqueueCombi(subs: Array<{ clientId: string }>, packet: StoredPacket): Promise<void>;
    outgoingUpdate(client: ClientRef, packet: StoredPacket): Promise<void>;
    outgoingClearMessageId(client: ClientRef, packet: { messageId?: number }): Promise<StoredPacket | undefined>;
    outgoingStream(client: ClientRef): Readable;
    incomingStorePacket(client: ClientRef, packet: StoredPacket): Promise<void>;
    incomingDelPacket(client: ClientRef, packet: { messageId?: number }): Promise<void>;
    putWill(client: ClientRef, packet: StoredPacket): Promise<void>;
    delWill(client: ClientRef): Promise<StoredPacket | undefined>;
    destroy(): Promise<void>;
  }
}
