/**
 * One WebSocket to /ws for the whole app: guarded frames, ping → pong, reconnect with capped
 * exponential backoff and jitter, REST resync after a reconnect, and subscribe/unsubscribe.
 */
import { readonly, ref, type Ref } from 'vue';
import type { LiveEvent } from '@shared/schemas/live';
import { parseLiveFrame } from './liveFrame';

export { parseLiveFrame };

export type LiveStatus = 'idle' | 'connecting' | 'open' | 'reconnecting' | 'stopped';
export type LiveHandler = (ev: LiveEvent) => void;

/** The parts of a WebSocket the client uses (a fake one in tests). */
export interface SocketLike {
  readonly readyState: number;
  send(data: string): void;
  close(code?: number, reason?: string): void;
  onopen: ((ev: Event) => void) | null;
  onmessage: ((ev: MessageEvent) => void) | null;
  onclose: ((ev: CloseEvent) => void) | null;
  onerror: ((ev: Event) => void) | null;
}

export interface LiveOptions {
  url?: () => string;
  createSocket?: (url: string) => SocketLike;
  /** Reloads state over REST; called after every reconnect and while the socket stays down. */
  resync?: () => Promise<unknown> | unknown;
  baseDelayMs?: number;
  maxDelayMs?: number;
  random?: () => number;
  setTimer?: (fn: () => void, ms: number) => unknown;
  clearTimer?: (t: unknown) => void;
}

export interface LiveClient {
  status: Readonly<Ref<LiveStatus>>;
  /** Failed attempts since the last open. */
  attempts: Readonly<Ref<number>>;
  lastEventAt: Readonly<Ref<number | null>>;
  /** Delay of the reconnect now scheduled, ms (null when none). */
  nextDelayMs: Readonly<Ref<number | null>>;
  start(): void;
  stop(): void;
  /** Registers a handler; returns the function that unregisters it. */
  subscribe(handler: LiveHandler): () => void;
  /** Number of frames dropped by the guard. */
  dropped: Readonly<Ref<number>>;
}

const OPEN = 1;
/** Close code the server's live hub uses when the user's session ended. */
export const SESSION_ENDED_CLOSE_CODE = 4001;

/** Backoff for attempt n (0-based): exponential, capped, "equal jitter" (half fixed, half random). */
export function backoffDelay(attempt: number, baseMs: number, capMs: number, random: () => number = Math.random): number {
  const exp = Math.min(capMs, baseMs * 2 ** Math.min(attempt, 30));
  return Math.round(exp / 2 + random() * (exp / 2));
}

export function defaultLiveUrl(): string {
  const proto = location.protocol === 'https:' ? 'wss:' : 'ws:';
  return `${proto}//${location.host}/ws`;
}

export function createLiveClient(opts: LiveOptions = {}): LiveClient {
  const url = opts.url ?? defaultLiveUrl;
  const createSocket = opts.createSocket ?? ((u: string) => new WebSocket(u) as unknown as SocketLike);
  const baseMs = opts.baseDelayMs ?? 1000;
  const capMs = opts.maxDelayMs ?? 30_000;
  const random = opts.random ?? Math.random;
  const setTimer = opts.setTimer ?? ((fn: () => void, ms: number) => setTimeout(fn, ms));
  const clearTimer = opts.clearTimer ?? ((t: unknown) => clearTimeout(t as ReturnType<typeof setTimeout>));

  const status = ref<LiveStatus>('idle');
  const attempts = ref(0);
  const lastEventAt = ref<number | null>(null);
  const nextDelayMs = ref<number | null>(null);
  const dropped = ref(0);
  const handlers = new Set<LiveHandler>();

  let socket: SocketLike | null = null;
  let timer: unknown = null;
  let everOpened = false;
  let wanted = false;

  const runResync = () => {
    if (!opts.resync) return;
    try {
      void Promise.resolve(opts.resync()).catch(() => undefined);
    } catch {
      /* a failing resync must not break the socket loop */
    }
  };

  function emit(ev: LiveEvent) {
    for (const h of [...handlers]) {
      try {
        h(ev);
      } catch (e) {
        console.error('live handler failed', e);
      }
    }
  }

  function onMessage(data: unknown) {
    const ev = parseLiveFrame(data);
    if (!ev) {
      dropped.value += 1;
      return;
    }
    lastEventAt.value = Date.now();
    if (ev.type === 'ping' && socket && socket.readyState === OPEN) socket.send(JSON.stringify({ type: 'pong' }));
    emit(ev);
  }

  function schedule() {
    if (!wanted || timer !== null) return;
    const delay = backoffDelay(attempts.value, baseMs, capMs, random);
    attempts.value += 1;
    nextDelayMs.value = delay;
    status.value = 'reconnecting';
    // While down, keep the screen roughly current (and let a 401 from REST end the session).
    if (attempts.value >= 2) runResync();
    timer = setTimer(() => {
      timer = null;
      nextDelayMs.value = null;
      connect();
    }, delay);
  }

  function detach(s: SocketLike) {
    s.onopen = null;
    s.onmessage = null;
    s.onclose = null;
    s.onerror = null;
  }

  function connect() {
    if (!wanted) return;
    status.value = 'connecting';
    let s: SocketLike;
    try {
      s = createSocket(url());
    } catch {
      schedule();
      return;
    }
    socket = s;
    s.onopen = () => {
      const wasReconnect = everOpened;
      everOpened = true;
      attempts.value = 0;
      status.value = 'open';
      if (wasReconnect) runResync();
    };
    s.onmessage = (e: MessageEvent) => onMessage(e.data);
    s.onerror = () => {
      /* a close event follows */
    };
    s.onclose = (ev: CloseEvent) => {
      detach(s);
      if (socket === s) socket = null;
      if (!wanted) {
        status.value = 'stopped';
        return;
      }
      // 4001: the server ended this session (sign-out elsewhere); a REST call lets the 401 handler act now.
      if (ev?.code === SESSION_ENDED_CLOSE_CODE) runResync();
      schedule();
    };
  }

  const onOnline = () => {
    if (!wanted || status.value === 'open' || status.value === 'connecting') return;
    if (timer !== null) {
      clearTimer(timer);
      timer = null;
    }
    attempts.value = 0;
    nextDelayMs.value = null;
    connect();
  };

  function start() {
    if (wanted) return;
    wanted = true;
    if (typeof window !== 'undefined') window.addEventListener('online', onOnline);
    connect();
  }

  function stop() {
    wanted = false;
    if (typeof window !== 'undefined') window.removeEventListener('online', onOnline);
    if (timer !== null) {
      clearTimer(timer);
      timer = null;
    }
    nextDelayMs.value = null;
    const s = socket;
    socket = null;
    if (s) {
      detach(s);
      try {
        s.close(1000, 'client stop');
      } catch {
        /* ignore */
      }
    }
    everOpened = false;
    attempts.value = 0;
    status.value = 'stopped';
  }

  function subscribe(handler: LiveHandler): () => void {
    handlers.add(handler);
    return () => {
      handlers.delete(handler);
    };
  }

  return {
    status: readonly(status),
    attempts: readonly(attempts),
    lastEventAt: readonly(lastEventAt),
    nextDelayMs: readonly(nextDelayMs),
    dropped: readonly(dropped),
    start,
    stop,
    subscribe,
  };
}

let shared: LiveClient | null = null;
let sharedResync: (() => Promise<unknown> | unknown) | null = null;

/** Sets what the app-wide client calls to resync (the fleet store's load). */
export function setLiveResync(fn: () => Promise<unknown> | unknown): void {
  sharedResync = fn;
}

/** The app-wide live client (one WebSocket per tab). */
export function useLive(): LiveClient {
  if (!shared) shared = createLiveClient({ resync: () => sharedResync?.() });
  return shared;
}
