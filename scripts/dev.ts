/**
 * npm run dev: the same back end as `npm start` (database, migrations, demo seed, server, simulator)
 * plus Vite's dev server on 127.0.0.1:5173 with hot reload and a proxy to the API and WebSocket.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import { ROOT, prepare, startSimulator } from './lib/prepare';
import { startConfiguredMosquitto } from './lib/mosquitto';

const prepared = await prepare();
const { instance, fleetFile } = prepared;
// MQTT_BROKER=mosquitto: the project's mosquitto on loopback (never Debian's system service).
const { config, mosquitto } = await startConfiguredMosquitto(prepared.config);
const { startServer } = await import('../server/main');
const running = await startServer(config);
const children: ChildProcess[] = [
  spawn(process.execPath, [path.join(ROOT, 'node_modules', 'vite', 'bin', 'vite.js')], { cwd: ROOT, stdio: 'inherit', env: { ...process.env, PORT: String(running.port) } }),
];
if (config.DEMO_MODE) children.push(startSimulator(config, fleetFile));
console.log(`API on ${running.url}; open http://127.0.0.1:5173 (Vite). Ctrl-C stops everything.`);

let stopping = false;
async function shutdown() {
  if (stopping) return;
  stopping = true;
  for (const c of children) if (c.exitCode === null) c.kill('SIGTERM');
  await running.stop();
  await mosquitto?.stop();
  await instance?.stop();
  process.exit(0);
}
process.on('SIGINT', () => void shutdown());
process.on('SIGTERM', () => void shutdown());
