/**
 * npm start: everything a new user needs, in order: .env, MariaDB (installed and started when
 * missing), migrations, the demo seed, the client build, the server, the simulator.
 * Ctrl-C stops what this process started.
 */
import type { ChildProcess } from 'node:child_process';
import { ensureClientBuilt } from './lib/build';
import { ROOT, prepare, startSimulator } from './lib/prepare';
import { startConfiguredMosquitto } from './lib/mosquitto';

const prepared = await prepare();
const { instance, fleetFile } = prepared;
// MQTT_BROKER=mosquitto: the project's mosquitto on loopback (never Debian's system service).
const { config, mosquitto } = await startConfiguredMosquitto(prepared.config);
ensureClientBuilt(ROOT);

const { startServer } = await import('../server/main');
const { DEMO_USERS } = await import('../server/seed/demoData');
const running = await startServer(config);
const simulator: ChildProcess | null = config.DEMO_MODE ? startSimulator(config, fleetFile) : null;

const signIns = config.DEMO_MODE ? `Demo sign-ins (demo mode only):\n${DEMO_USERS.map((u) => `  ${u.role.padEnd(10)} ${u.email.padEnd(36)} ${u.password}`).join('\n')}\n` : '';
console.log(`
Rimehold is running at ${running.url}
${signIns}${config.SMTP_FAKE ? `Captured e-mail: ${running.url}/admin/mailbox (admins)\n` : ''}Press Ctrl-C to stop.`);

let stopping = false;
async function shutdown(signal: string) {
  if (stopping) return;
  stopping = true;
  console.log(`\n${signal}: stopping…`);
  if (simulator && simulator.exitCode === null) {
    const exited = new Promise((r) => simulator.once('exit', r));
    simulator.kill('SIGTERM');
    await Promise.race([exited, new Promise((r) => setTimeout(r, 5000))]);
  }
  await running.stop();
  await mosquitto?.stop();
  await instance?.stop();
  console.log('stopped');
  process.exit(0);
}
process.on('SIGINT', () => void shutdown('SIGINT'));
process.on('SIGTERM', () => void shutdown('SIGTERM'));
