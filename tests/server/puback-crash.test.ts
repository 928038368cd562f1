/**
 * A PUBACK leaves the broker only after the reading is durable: a controller publishes QoS 1 as
 * fast as it is acknowledged, the server process is SIGKILLed mid-stream and started again, and
 * every seq that got its PUBACK is stored exactly once.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import type { RunningServer } from '../../server/main';
import { startTestServer } from './helpers/app';
import { connectController, provisionBox, reading, waitFor } from './helpers/telemetry';
import { topics } from '../../shared/schemas/telemetry';

const here = path.dirname(fileURLToPath(import.meta.url));
const fixture = path.join(here, 'fixtures/telemetry-server.ts');
/** Acknowledged readings before the kill: enough that the stream is in full flow. */
const ACKS_BEFORE_KILL = 300;
/** Each journal write starts this much later (ms), a slow disk: wide enough to see an early PUBACK. */
const SLOW_WRITE_MS = 50;
/** Publishes in flight at once (mqtt.js and aedes allow far more). */
const WINDOW = 16;

let db: RunningServer;
let child: ChildProcess | null = null;

/** Starts the server fixture in a child process (tsx as a loader: the kill hits the server itself); resolves its MQTT URL once it listens. */
function startChild(dir: string, mqttPort: number): Promise<{ proc: ChildProcess; url: string }> {
  return new Promise((resolve, reject) => {
    const proc = spawn(process.execPath, ['--import', 'tsx', fixture], { env: { ...process.env, FIXTURE_MQTT_PORT: String(mqttPort), FIXTURE_BROKER_DIR: dir, FIXTURE_SLOW_WRITE_MS: String(SLOW_WRITE_MS) }, stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let errText = '';
    proc.stdout?.on('data', (d: Buffer) => {
      out += d.toString();
      const m = /READY (\S+)/.exec(out);
      if (m?.[1]) resolve({ proc, url: m[1] });
    });
    proc.stderr?.on('data', (d: Buffer) => (errText += d.toString()));
    proc.once('exit', (code) => reject(new Error(`server fixture exited (${code}) before it was ready: ${errText}`)));
  });
}

beforeAll(async () => {
  db = await startTestServer();
});
afterAll(async () => {
  child?.kill('SIGKILL');
  await db.stop();
});

describe('PUBACK after the durable write', () => {
  it('stores every acknowledged reading exactly once when the server process is SIGKILLed mid-stream', async () => {
    const p = await provisionBox(db);
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rimehold-crash-'));
    const first = await startChild(dir, 0);
    child = first.proc;
    const mqttPort = Number(new URL(first.url).port);

    const c = await connectController(first.url, p.serial, p.secret);
    c.on('error', () => undefined);
    const acked: number[] = [];
    const baseMs = Date.now() - 30 * 60_000;
    let killed = false;
    let nextSeq = 1;
    await new Promise<void>((resolve) => {
      // Each acknowledgement sends the next seq at once; WINDOW publishes are in flight at a time.
      const next = () => {
        const seq = nextSeq++;
        const payload = JSON.stringify(reading({ seq, ts: new Date(baseMs + seq * 1000).toISOString() }));
        c.publish(topics.telemetry(p.serial), payload, { qos: 1 }, (err) => {
          if (killed) return;
          if (err) return resolve();
          acked.push(seq);
          if (acked.length >= ACKS_BEFORE_KILL) {
            // Killed the instant the PUBACK arrives: the messages just acknowledged are in flight.
            killed = true;
            first.proc.kill('SIGKILL');
            return resolve();
          }
          next();
        });
      };
      for (let i = 0; i < WINDOW; i++) next();
    });
    await new Promise<void>((r) => (first.proc.exitCode !== null || first.proc.signalCode ? r() : first.proc.once('exit', () => r())));
    c.end(true);

    const second = await startChild(dir, mqttPort);
    child = second.proc;
    const counts = async () => {
      const rows = await db.ctx.sequelize.query<{ seq: number | string; n: number | string }>('SELECT seq, COUNT(*) AS n FROM readings WHERE box_id = ? GROUP BY seq', { replacements: [p.box.id], type: QueryTypes.SELECT });
      return new Map(rows.map((r) => [Number(r.seq), Number(r.n)]));
    };
    const stored = await waitFor(async () => {
      const m = await counts();
      return acked.every((s) => m.has(s)) ? m : null;
    }, 15_000, 200).catch(async () => counts());

    expect(acked.length).toBe(ACKS_BEFORE_KILL);
    expect(acked.filter((s) => !stored.has(s))).toEqual([]);
    expect(acked.filter((s) => stored.get(s) !== 1)).toEqual([]);
  }, 60_000);
});
