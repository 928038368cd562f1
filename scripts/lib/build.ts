/** Builds the client with Vite when dist/client is missing or older than the client sources. */
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, statSync } from 'node:fs';
import path from 'node:path';

function newestMtimeMs(dir: string): number {
  let newest = 0;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, entry.name);
    newest = Math.max(newest, entry.isDirectory() ? newestMtimeMs(p) : statSync(p).mtimeMs);
  }
  return newest;
}

/** True when the built client is missing or a source of it (src/, shared/, index.html, public/) changed since. */
export function clientBuildStale(root: string): boolean {
  const built = path.join(root, 'dist', 'client', 'index.html');
  if (!existsSync(built)) return true;
  const builtAt = statSync(built).mtimeMs;
  const sources = ['src', 'shared', 'public', 'index.html', 'vite.config.ts'].map((p) => path.join(root, p)).filter((p) => existsSync(p));
  return sources.some((p) => (statSync(p).isDirectory() ? newestMtimeMs(p) : statSync(p).mtimeMs) > builtAt);
}

/** Runs `vite build` when the client build is stale (or when forced). */
export function ensureClientBuilt(root: string, force = false, log: (l: string) => void = console.log): void {
  if (!force && !clientBuildStale(root)) return;
  log('building the client (vite build)…');
  const r = spawnSync(process.execPath, [path.join(root, 'node_modules', 'vite', 'bin', 'vite.js'), 'build', '--logLevel', 'warn'], { cwd: root, stdio: 'inherit' });
  if (r.status !== 0) throw new Error('vite build failed');
}
