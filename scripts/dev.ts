/**
 * npm run dev: the same back end as `npm start` (database, migrations, demo seed, server, simulator)
 * plus Vite's dev server on 127.0.0.1:5173 with hot reload and a proxy to the API and WebSocket.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { ensureEnvFile } from './lib/env';
import { ensureDatabase } from './lib/database';

const root = path.resolve(path.dirname(new URL(import.meta.url).pathname), '..');
ensureEnvFile(root);
const { loadConfig } = await import('../server/config');
const config = loadConfig();
const instance = await ensureDatabase(config, 'mariadb');
const { createSequelize } = await import('../server/db/sequelize');
const { migrateUp } = await import('../server/db/migrate');
const { initModels } = await import('../server/models');
const { seedDemo } = await import('../server/seed/seed');
const fleetFile = path.join(config.DATA_DIR, 'demo-controllers.json');
const sequelize = createSequelize(config);
await migrateUp(sequelize);
await seedDemo(sequelize, initModels(sequelize), fleetFile);
await sequelize.close();

const { startServer } = await import('../server/main');
const running = await startServer(config);
const tsx = path.join(root, 'node_modules', 'tsx', 'dist', 'cli.mjs');
const children: ChildProcess[] = [
  spawn(process.execPath, [path.join(root, 'node_modules', 'vite', 'bin', 'vite.js')], { cwd: root, stdio: 'inherit', env: { ...process.env, PORT: String(running.port) } }),
];
if (config.DEMO_MODE) {
  children.push(spawn(process.execPath, [tsx, path.join(root, 'simulator', 'cli.ts'), '--fleet', fleetFile], { cwd: root, stdio: ['ignore', 'ignore', 'inherit'], env: { ...process.env, TZ: 'UTC', MQTT_PORT: String(config.MQTT_PORT) } }));
}
console.log(`API on ${running.url}; open http://127.0.0.1:5173 (Vite). Ctrl-C stops everything.`);

let stopping = false;
async function shutdown() {
  if (stopping) return;
  stopping = true;
  for (const c of children) if (c.exitCode === null) c.kill('SIGTERM');
  await running.stop();
  await instance?.stop();
  process.exit(0);
}
process.on('SIGINT', () => void shutdown());
process.on('SIGTERM', () => void shutdown());
