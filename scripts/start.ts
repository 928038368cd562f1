/**
 * npm start: everything a new user needs, in order: .env, MariaDB (installed and started when
 * missing), migrations, the demo seed, the client build, the server, the simulator.
 * Ctrl-C stops what this process started.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { ensureEnvFile } from './lib/env';
import { ensureClientBuilt } from './lib/build';
import { ensureDatabase } from './lib/database';

const root = path.resolve(path.dirname(new URL(import.meta.url).pathname), '..');
if (ensureEnvFile(root)) console.log('created .env from .env.example with generated secrets');
// The config module reads .env, so import it after the file exists.
const { loadConfig } = await import('../server/config');
const config = loadConfig();

const instance = await ensureDatabase(config, 'mariadb');
const { createSequelize } = await import('../server/db/sequelize');
const { migrateUp } = await import('../server/db/migrate');
const { initModels } = await import('../server/models');
const { seedDemo } = await import('../server/seed/seed');
const { DEMO_USERS } = await import('../server/seed/demoData');

const fleetFile = path.join(config.DATA_DIR, 'demo-controllers.json');
const sequelize = createSequelize(config);
const applied = await migrateUp(sequelize);
if (applied.length) console.log(`migrations applied: ${applied.join(', ')}`);
const seeded = await seedDemo(sequelize, initModels(sequelize), fleetFile);
console.log(seeded.created ? 'demo scenario seeded' : 'demo scenario already present');
await sequelize.close();

ensureClientBuilt(root);

const { startServer } = await import('../server/main');
const running = await startServer(config);

let simulator: ChildProcess | null = null;
if (config.DEMO_MODE) {
  simulator = spawn(process.execPath, [path.join(root, 'node_modules', 'tsx', 'dist', 'cli.mjs'), path.join(root, 'simulator', 'cli.ts'), '--fleet', fleetFile], {
    cwd: root,
    stdio: ['ignore', 'ignore', 'inherit'],
    env: { ...process.env, TZ: 'UTC', MQTT_PORT: String(config.MQTT_PORT) },
  });
}

console.log(`
Rimehold is running at ${running.url}
Demo sign-ins:
${DEMO_USERS.map((u) => `  ${u.role.padEnd(10)} ${u.email.padEnd(36)} ${u.password}`).join('\n')}
${config.SMTP_FAKE ? `Captured e-mail: ${running.url}/admin/mailbox (admins)\n` : ''}Press Ctrl-C to stop.`);

let stopping = false;
async function shutdown(signal: string) {
  if (stopping) return;
  stopping = true;
  console.log(`\n${signal}: stopping…`);
  if (simulator && simulator.exitCode === null) {
    const sim = simulator;
    const exited = new Promise((r) => sim.once('exit', r));
    sim.kill('SIGTERM');
    await Promise.race([exited, new Promise((r) => setTimeout(r, 5000))]);
  }
  await running.stop();
  await instance?.stop();
  console.log('stopped');
  process.exit(0);
}
process.on('SIGINT', () => void shutdown('SIGINT'));
process.on('SIGTERM', () => void shutdown('SIGTERM'));
