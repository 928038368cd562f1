/**
 * Load generator for bench:ingest, run as a child process so it does not share the server's
 * event loop. Modes:
 *   publish: many lightweight controller connections publishing telemetry at QoS 1 as fast as
 *            the broker acknowledges (a window of in-flight messages per connection), for a time;
 *   ws:      one signed-in WebSocket client measuring publish → push latency from the reading's ts.
 * Prints one JSON line with its results on stdout.
 */
import mqtt, { type MqttClient } from 'mqtt';
import WebSocket from 'ws';

const args = new Map(process.argv.slice(2).map((a) => [a.slice(0, a.indexOf('=')), a.slice(a.indexOf('=') + 1)] as [string, string]));
const mode = args.get('--mode');

async function publish(): Promise<void> {
  const url = args.get('--url') ?? 'mqtt://127.0.0.1:1883';
  const creds = JSON.parse(args.get('--creds') ?? '[]') as Array<{ serial: string; secret: string }>;
  const seconds = Number(args.get('--seconds') ?? 10);
  const window = Number(args.get('--window') ?? 8);
  /** Total messages per second across all connections; 0 = as fast as the broker acknowledges. */
  const rate = Number(args.get('--rate') ?? 0);
  /** Subscribe each connection to its `committed` topic, as a controller does (the broker then delivers those too). */
  const hearCommitted = args.get('--committed') !== '0';
  let committedMessages = 0;
  const clients: MqttClient[] = [];
  for (const c of creds) {
    clients.push(
      await mqtt.connectAsync(url, {
        clientId: `ctl-${c.serial}`,
        username: c.serial,
        password: c.secret,
        protocolVersion: 4,
        reconnectPeriod: 1000,
        clean: true,
      }),
    );
    const client = clients[clients.length - 1] as MqttClient;
    if (hearCommitted) {
      client.on('message', () => void committedMessages++);
      await client.subscribeAsync(`rimehold/v1/ctl/${c.serial}/committed`, { qos: 0 });
    }
  }
  // The bench takes its CPU snapshots of the other processes from here: connecting is not counted.
  process.stdout.write('connected\n');
  const cpu0 = process.cpuUsage();
  const published = new Map<string, number>();
  const start = Date.now();
  const end = start + seconds * 1000;
  let total = 0;
  await Promise.all(
    creds.map(async (c, i) => {
      const client = clients[i];
      if (!client) return;
      let seq = Number(args.get('--seq-base') ?? 0);
      let lastTs = 0;
      const topic = `rimehold/v1/ctl/${c.serial}/telemetry`;
      const one = async () => {
        while (Date.now() < end) {
          const now = Math.max(Date.now(), lastTs + 1);
          lastTs = now;
          seq++;
          const body = JSON.stringify({
            seq,
            ts: new Date(now).toISOString(),
            suctionKPaG: 250 + (seq % 7),
            suctionLineC: -2.5,
            boxAirC: 2 + (seq % 10) / 10,
            valveSteps: 700 + (seq % 50),
            compressorOn: seq % 3 !== 0,
            fanOn: true,
            defrostOn: false,
            doorOpen: false,
          });
          await client.publishAsync(topic, body, { qos: 1 });
          total++;
          published.set(c.serial, seq);
        }
      };
      if (rate > 0) {
        // Open loop at a fixed rate: each connection publishes every creds.length / rate seconds.
        const periodMs = (creds.length / rate) * 1000;
        await new Promise((r) => setTimeout(r, Math.random() * periodMs));
        const inflight: Promise<void>[] = [];
        while (Date.now() < end) {
          const t = Date.now();
          const now = Math.max(t, lastTs + 1);
          lastTs = now;
          seq++;
          const body = JSON.stringify({ seq, ts: new Date(now).toISOString(), suctionKPaG: 250, suctionLineC: -2.5, boxAirC: 2.2, valveSteps: 720, compressorOn: true, fanOn: true, defrostOn: false, doorOpen: false });
          const s = seq;
          inflight.push(client.publishAsync(topic, body, { qos: 1 }).then(() => {
            total++;
            published.set(c.serial, Math.max(published.get(c.serial) ?? 0, s));
          }));
          await new Promise((r) => setTimeout(r, Math.max(0, periodMs - (Date.now() - t))));
        }
        await Promise.all(inflight);
        return;
      }
      // A small window of in-flight messages per connection; each lane owns its seq range order.
      const lanes = Array.from({ length: window }, () => one());
      await Promise.all(lanes);
    }),
  );
  const elapsed = (Date.now() - start) / 1000;
  const cpu = process.cpuUsage(cpu0);
  await Promise.all(clients.map((c) => c.endAsync()));
  process.stdout.write(`${JSON.stringify({ published: Object.fromEntries(published), total, elapsed, startedAt: start, cpuS: (cpu.user + cpu.system) / 1e6, committedMessages })}\n`);
}

async function ws(): Promise<void> {
  const url = args.get('--url') ?? '';
  const cookie = args.get('--cookie') ?? '';
  const seconds = Number(args.get('--seconds') ?? 10);
  const latencies: number[] = [];
  const sock = new WebSocket(url, { headers: { Cookie: cookie, Origin: url.replace('ws://', 'http://').replace('/ws', '') } });
  await new Promise<void>((resolve, reject) => {
    sock.once('open', () => resolve());
    sock.once('error', reject);
  });
  sock.on('message', (d) => {
    const e = JSON.parse(d.toString()) as { type: string; reading?: { ts: string } };
    if (e.type === 'reading' && e.reading) latencies.push(Date.now() - Date.parse(e.reading.ts));
  });
  process.stdout.write('ready\n');
  const cpu0 = process.cpuUsage();
  await new Promise((r) => setTimeout(r, seconds * 1000));
  const cpu = process.cpuUsage(cpu0);
  sock.close();
  latencies.sort((a, b) => a - b);
  const q = (p: number) => latencies[Math.min(latencies.length - 1, Math.floor(p * latencies.length))] ?? null;
  process.stdout.write(`${JSON.stringify({ received: latencies.length, p50: q(0.5), p99: q(0.99), max: latencies[latencies.length - 1] ?? null, cpuS: (cpu.user + cpu.system) / 1e6 })}\n`);
}

if (mode === 'publish') await publish();
else if (mode === 'ws') await ws();
else throw new Error('--mode=publish|ws');
