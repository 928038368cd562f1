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

/** Whether something accepts connections on 127.0.0.1:port (1 s timeout). */
export function portOpen(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const s = net.connect({ host: '127.0.0.1', port }, () => {
      s.destroy();
      resolve(true);
    });
    s.on('error', () => resolve(false));
    s.setTimeout(1000, () => {
      s.destroy();
      resolve(false);
    });
  });
}

/** Whether a process with this pid exists. */
export function pidAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}
