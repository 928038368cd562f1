/**
 * What the server's child processes share (the embedded broker's process, the ingest workers):
 * forking a TypeScript entry with tsx, a restart delay that doubles up to a ceiling, a request
 * answered over the IPC channel with a timeout, and a stop that ends in SIGKILL if the child
 * does not exit in time.
 */
import { fork, type ChildProcess } from 'node:child_process';
import { createRequire } from 'node:module';
import { fileURLToPath, pathToFileURL } from 'node:url';

/** tsx as an ESM loader, the way the project runs TypeScript (resolved from here, not from the cwd). */
const TSX_LOADER = pathToFileURL(createRequire(import.meta.url).resolve('tsx')).href;

/** A child that has not said it is ready by then is killed and its start fails. */
export const CHILD_START_TIMEOUT_MS = 60_000;
/** A stop that has not ended the child by then kills it. */
export const CHILD_STOP_TIMEOUT_MS = 15_000;

/** Forks a TypeScript entry (a file URL) with an IPC channel, JSON messages and the server's stdout/stderr. */
export function forkTs(entry: URL): ChildProcess {
  return fork(fileURLToPath(entry), [], {
    execArgv: ['--import', TSX_LOADER],
    env: { ...process.env, TZ: 'UTC' },
    stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
    serialization: 'json',
  });
}

/** The wait before the next restart of a child that died: 0.5 s, doubling to 10 s; reset once it runs again. */
export class RestartDelay {
  private ms: number;
  constructor(
    private readonly minMs = 500,
    private readonly maxMs = 10_000,
  ) {
    this.ms = minMs;
  }
  /** The delay to wait now; the one after it is twice as long (up to the ceiling). */
  next(): number {
    const d = this.ms;
    this.ms = Math.min(this.maxMs, this.ms * 2);
    return d;
  }
  reset(): void {
    this.ms = this.minMs;
  }
}

/**
 * Requests answered by id over a child's IPC channel ('sync' → 'synced'): ask() sends the request
 * and resolves on the answer or after the timeout; settle() is called with the id of an answer;
 * releaseAll() resolves every waiting request (the child died or is stopping).
 */
export class IpcRequests {
  private nextId = 0;
  private readonly waiting = new Map<number, () => void>();

  constructor(private readonly timeoutMs: number) {}

  ask(child: ChildProcess, message: (id: number) => object): Promise<void> {
    const id = ++this.nextId;
    return new Promise<void>((resolve) => {
      const done = () => {
        clearTimeout(timer);
        this.waiting.delete(id);
        resolve();
      };
      const timer = setTimeout(done, this.timeoutMs);
      this.waiting.set(id, done);
      child.send(message(id));
    });
  }

  settle(id: number): void {
    this.waiting.get(id)?.();
  }

  releaseAll(): void {
    for (const done of [...this.waiting.values()]) done();
  }
}

/** Asks a running child to stop (or SIGTERMs it without a channel), SIGKILLs it after the timeout, resolves once it has exited. */
export async function stopChild(child: ChildProcess | null, stopMessage: object, timeoutMs = CHILD_STOP_TIMEOUT_MS): Promise<void> {
  if (!child || child.exitCode !== null || child.signalCode !== null) return;
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  if (child.connected) child.send(stopMessage);
  else child.kill('SIGTERM');
  const killer = setTimeout(() => child.kill('SIGKILL'), timeoutMs);
  await exited;
  clearTimeout(killer);
}
