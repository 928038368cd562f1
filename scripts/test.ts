/**
 * npm test: starts a separate MariaDB instance (.data/mariadb-test-PORT on the first free port from
 * TEST_DB_PORT, default 3308)
 * with a fresh database, makes sure Chromium and the client build exist for the browser test,
 * runs every Vitest project, then stops the instance. Extra arguments go to vitest.
 */
import { spawn, spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync } from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import { MariaInstance } from './lib/mariadb';
import { ensureClientBuilt } from './lib/build';

const root = path.resolve(path.dirname(new URL(import.meta.url).pathname), '..');
/** The first free port from `start`: concurrent test runs each get their own instance. */
async function freePort(start: number): Promise<number> {
  for (let p = start; p < start + 50; p++) {
    const free = await new Promise<boolean>((resolve) => {
      const srv = net.createServer().once('error', () => resolve(false)).listen(p, '127.0.0.1', () => srv.close(() => resolve(true)));
    });
    if (free) return p;
  }
  throw new Error(`no free port from ${start}`);
}

const port = await freePort(Number(process.env.TEST_DB_PORT ?? 3308));
const dataDir = path.join(root, '.data', `mariadb-test-${port}`);
const db = { name: 'rimehold_test', user: 'rimehold_test', password: randomBytes(18).toString('base64url') };

function ensureChromium() {
  if (existsSync('/usr/bin/chromium') || process.env.CHROMIUM_PATH) return;
  if (process.getuid?.() !== 0) {
    console.warn('Chromium is missing: install it with `sudo apt-get install -y chromium` for the browser tests');
    return;
  }
  console.log('installing Debian chromium for the browser tests…');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  spawnSync('apt-get', ['update', '-qq'], { stdio: 'inherit', env });
  const r = spawnSync('apt-get', ['install', '-y', '-qq', 'chromium'], { stdio: 'inherit', env });
  if (r.status !== 0) throw new Error('apt-get install chromium failed');
}

const instance = new MariaInstance({ dataDir, port, bufferPoolMiB: 256, redoLogMiB: 128, log: (l) => console.log(`[test-db] ${l}`) });
await instance.start();
let code = 1;
try {
  instance.ensureAppDatabase(db);
  instance.resetDatabase(db.name);
  ensureChromium();
  if (process.env.SKIP_BUILD !== '1') ensureClientBuilt(root);
  const env = {
    ...process.env,
    TZ: 'UTC',
    NODE_ENV: 'test',
    DB_HOST: '127.0.0.1',
    DB_PORT: String(port),
    DB_NAME: db.name,
    DB_USER: db.user,
    DB_PASSWORD: db.password,
    DB_EXTERNAL: '1',
    TEST_DB_DATADIR: dataDir,
    TEST_DB_PORT: String(port),
    SESSION_SECRET: randomBytes(24).toString('base64url'),
    SMTP_FAKE: '1',
    SMTP_PORT: '0',
    PORT: '0',
    MQTT_PORT: '0',
    LOG_LEVEL: process.env.LOG_LEVEL ?? 'silent',
    DEMO_MODE: '0',
  };
  const vitest = spawn(process.execPath, [path.join(root, 'node_modules', 'vitest', 'vitest.mjs'), 'run', ...process.argv.slice(2)], { cwd: root, stdio: 'inherit', env });
  code = await new Promise<number>((resolve) => vitest.on('exit', (c) => resolve(c ?? 1)));
} finally {
  // Tests may have stopped and restarted the instance (outage tests): stop whatever runs on our data dir.
  await instance.stop(true);
}
process.exit(code);
