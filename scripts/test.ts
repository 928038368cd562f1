/**
 * npm test: starts a separate MariaDB instance (.data/mariadb-test-PORT on the first free port from
 * TEST_DB_PORT, default 3308)
 * with a fresh database, makes sure Chromium and the client build exist for the browser test,
 * runs every Vitest project, then stops the instance. Extra arguments go to vitest.
 */
import { spawn, spawnSync } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { MariaInstance } from './lib/mariadb';
import { ensureMosquittoInstalled, findMosquitto, MosquittoInstance } from './lib/mosquitto';
import { firstFreePort } from './lib/ports';
import { ensureClientBuilt } from './lib/build';
import { projectRootFrom } from './lib/root';

const root = projectRootFrom(import.meta.url, 1);
/**
 * The first port from `start` that is free and not claimed by another live test run. The claim
 * (a lock file with our pid) also covers the outage test, which stops the instance for a while.
 */
async function claimPort(start: number): Promise<{ port: number; release: () => void }> {
  // Machine-wide, not per checkout: two clones testing at once must not take each other's port
  // while one of them has its instance stopped (the outage test).
  const lockDir = path.join(os.tmpdir(), 'rimehold-test-locks');
  mkdirSync(lockDir, { recursive: true });
  const lockOf = (p: number) => path.join(lockDir, `test-db-${p}.pid`);
  const claimedByLiveRun = (p: number) => {
    if (!existsSync(lockOf(p))) return false;
    try {
      process.kill(Number(readFileSync(lockOf(p), 'utf8')), 0);
      return true;
    } catch {
      return false; // stale lock
    }
  };
  const port = await firstFreePort(start, claimedByLiveRun);
  writeFileSync(lockOf(port), String(process.pid));
  return { port, release: () => rmSync(lockOf(port), { force: true }) };
}

const claim = await claimPort(Number(process.env.TEST_DB_PORT ?? 3308));
const port = claim.port;
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

/** Debian's mosquitto for tests/server/mosquitto.test.ts (and MQTT_BROKER=mosquitto): installed when missing and root. */
function ensureMosquitto() {
  if (findMosquitto()) return;
  if (process.getuid?.() !== 0) {
    console.warn('mosquitto is missing: install it with `sudo apt-get install -y mosquitto` for the mosquitto tests (they are skipped without it)');
    return;
  }
  ensureMosquittoInstalled((l) => console.log(`[test-mqtt] ${l}`));
}

const instance = new MariaInstance({ dataDir, port, bufferPoolMiB: 256, redoLogMiB: 128, log: (l) => console.log(`[test-db] ${l}`) });
await instance.start();
let code = 1;
let mosquitto: MosquittoInstance | null = null;
try {
  instance.ensureAppDatabase(db);
  instance.resetDatabase(db.name);
  ensureChromium();
  ensureMosquitto();
  // MQTT_BROKER=mosquitto: one mosquitto for the run, on a free loopback port, in its own data dir.
  const mosquittoEnv: Record<string, string> = {};
  if (process.env.MQTT_BROKER === 'mosquitto') {
    const dir = path.join(root, '.data', `mosquitto-test-${port}`);
    rmSync(dir, { recursive: true, force: true });
    mosquitto = new MosquittoInstance({ dataDir: dir, port: 0, maxPacketBytes: 8192, maxConnections: 10_000, maxQueuedMessages: 200_000, autosaveS: 10, log: (l) => console.log(`[test-mqtt] ${l}`) });
    mosquittoEnv.MQTT_PORT = String(await mosquitto.start());
    mosquittoEnv.MOSQUITTO_DIR = dir;
  }
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
    ...mosquittoEnv,
  };
  const vitest = spawn(process.execPath, [path.join(root, 'node_modules', 'vitest', 'vitest.mjs'), 'run', ...process.argv.slice(2)], { cwd: root, stdio: 'inherit', env });
  code = await new Promise<number>((resolve) => vitest.on('exit', (c) => resolve(c ?? 1)));
} finally {
  // Tests may have stopped and restarted the instance (outage tests): stop whatever runs on our data dir.
  await mosquitto?.stop();
  await instance.stop(true);
  claim.release();
}
process.exit(code);
