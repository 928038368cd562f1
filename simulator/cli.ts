/**
 * `npm run simulate -- [--fleet .data/demo-controllers.json] [--url mqtt://127.0.0.1:1883] [--interval 10]
 *   [--speed 1] [--start-ago S] [--fault SERIAL:FAULT[:SENSOR]]... [--duration S] [--no-fault-channel]`
 * Runs the simulated controllers of a fleet file until Ctrl-C or --duration real seconds.
 */
import { parseArgs } from 'node:util';
import { startAgoFor } from './clock';
import { startFleet } from './fleet';
import { readFleetFile } from './fleetFile';
import { consoleLogger } from './log';
import { FAULT_NAMES, THERMISTOR_NAMES, type FaultName, type ThermistorName } from './model/faults';

const LOOPBACK_HOSTS = new Set(['127.0.0.1', 'localhost', '[::1]', '::1']);

/** Parsed command line of the simulator. */
export interface CliOptions {
  fleetPath: string;
  url: string;
  intervalS: number;
  speed: number;
  startAgoS: number;
  durationS: number | null;
  faults: { serial: string; fault: FaultName; sensor?: ThermistorName }[];
  faultChannel: boolean;
}

/** Parses argv (without node and script) and the environment; throws an Error with a usage hint. */
export function parseCli(argv: string[], env: NodeJS.ProcessEnv): CliOptions {
  const { values } = parseArgs({
    args: argv,
    options: {
      fleet: { type: 'string', default: '.data/demo-controllers.json' },
      url: { type: 'string' },
      interval: { type: 'string', default: '10' },
      speed: { type: 'string', default: '1' },
      'start-ago': { type: 'string' },
      duration: { type: 'string' },
      fault: { type: 'string', multiple: true, default: [] },
      'no-fault-channel': { type: 'boolean', default: false },
    },
    strict: true,
  });
  const url = values.url ?? env.MQTT_URL ?? `mqtt://127.0.0.1:${env.MQTT_PORT ?? '1883'}`;
  const host = new URL(url).hostname;
  if (!LOOPBACK_HOSTS.has(host)) throw new Error(`refusing broker ${url}: the simulator only connects to loopback (127.0.0.1)`);
  const num = (name: string, text: string, min: number) => {
    const v = Number(text);
    if (!Number.isFinite(v) || v < min) throw new Error(`--${name} must be a number ≥ ${min}, got ${text}`);
    return v;
  };
  const intervalS = num('interval', values.interval, 0.1);
  const speed = num('speed', values.speed, 1);
  const durationS = values.duration === undefined ? null : num('duration', values.duration, 1);
  const startAgoS = values['start-ago'] !== undefined ? num('start-ago', values['start-ago'], 0) : speed > 1 ? startAgoFor(speed, durationS ?? 3600) : 0;
  const faults = values.fault.map((spec) => {
    const [serial, fault, sensor] = spec.split(':');
    if (!serial || !fault || !(FAULT_NAMES as readonly string[]).includes(fault)) {
      throw new Error(`--fault ${spec}: expected SERIAL:FAULT with FAULT one of ${FAULT_NAMES.join(', ')}`);
    }
    if (sensor !== undefined && !(THERMISTOR_NAMES as readonly string[]).includes(sensor)) {
      throw new Error(`--fault ${spec}: SENSOR must be one of ${THERMISTOR_NAMES.join(', ')}`);
    }
    return { serial, fault: fault as FaultName, sensor: sensor as ThermistorName | undefined };
  });
  return { fleetPath: values.fleet, url, intervalS, speed, startAgoS, durationS, faults, faultChannel: !values['no-fault-channel'] };
}

export const USAGE = `npm run simulate -- [options]
  --fleet FILE          fleet file (default .data/demo-controllers.json, written by npm start)
  --url URL             broker on loopback (default mqtt://127.0.0.1:$MQTT_PORT or 1883)
  --interval S          telemetry interval in simulated seconds (default 10)
  --speed N             simulated seconds per real second (default 1)
  --start-ago S         start the simulated clock S seconds in the past
  --duration S          stop after S real seconds
  --fault SERIAL:FAULT[:SENSOR]   start with a fault (repeatable); faults: ${FAULT_NAMES.join(', ')}
  --no-fault-channel    do not listen for faults injected from the UI`;

async function main(): Promise<void> {
  if (process.argv.includes('--help') || process.argv.includes('-h')) {
    console.log(USAGE);
    return;
  }
  const logger = consoleLogger();
  const opts = parseCli(process.argv.slice(2), process.env);
  const file = await readFleetFile(opts.fleetPath);
  const fleet = await startFleet({
    controllers: file.controllers,
    url: opts.url,
    intervalS: opts.intervalS,
    speed: opts.speed,
    startAgoS: opts.startAgoS,
    faults: opts.faults,
    faultChannel: opts.faultChannel,
    logger,
  });
  let stopping = false;
  const stop = async (why: string) => {
    if (stopping) return;
    stopping = true;
    logger.info(`stopping (${why})`);
    await fleet.stop();
    const stats = fleet.stats();
    const published = [...stats.published.values()].reduce((n, s) => n + s.length, 0);
    const buffered = [...stats.buffered.values()].reduce((n, s) => n + s.length, 0);
    logger.info(`published ${published} readings (PUBACKed), ${buffered} still buffered`);
    process.exit(0);
  };
  process.on('SIGINT', () => void stop('SIGINT'));
  process.on('SIGTERM', () => void stop('SIGTERM'));
  if (opts.durationS !== null) setTimeout(() => void stop(`--duration ${opts.durationS} s`), opts.durationS * 1000);
}

const isMain = process.argv[1] !== undefined && import.meta.url.endsWith(process.argv[1].replace(/\\/g, '/').split('/').pop() ?? '');
if (isMain) {
  main().catch((err: unknown) => {
    console.error(err instanceof Error ? err.message : String(err));
    process.exit(1);
  });
}
