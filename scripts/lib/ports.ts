/** Loopback port probing for the scripts that start their own MariaDB instance. */
import net from 'node:net';

/** True when nothing listens on 127.0.0.1:port. */
export function portFree(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const srv = net.createServer().once('error', () => resolve(false)).listen(port, '127.0.0.1', () => srv.close(() => resolve(true)));
  });
}

/** The first free port from `start` (50 tried), optionally skipping ports `taken` says are claimed. */
export async function firstFreePort(start: number, taken: (port: number) => boolean = () => false): Promise<number> {
  for (let p = start; p < start + 50; p++) {
    if (!taken(p) && (await portFree(p))) return p;
  }
  throw new Error(`no free port from ${start}`);
}
