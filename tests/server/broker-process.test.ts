/**
 * The embedded broker in its own process (MQTT_EMBEDDED_IN=process): the server forks it, keeps a
 * proxy with the broker's interface, forwards revocations, takes its metrics over IPC, reports it
 * down on /health while it is dead and starts it again on the same port.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import type { RunningServer } from '../../server/main';
import { BrokerProxy } from '../../server/mqtt/brokerProxy';
import { mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { setDisabled } from '../../server/controllers/service';
import { EventBus } from '../../server/events/bus';
import { createTelemetryMetrics } from '../../server/telemetry/metrics';
import { createLogger } from '../../server/logger';
import { loadConfig } from '../../server/config';
import { connectController, metricValue, provisionBox, publishTelemetry, reading, startTelemetryServer, storedRows, waitFor } from './helpers/telemetry';

let srv: RunningServer;
let url: string;

beforeAll(async () => {
  srv = await startTelemetryServer({ MQTT_EMBEDDED_IN: 'process' });
  url = srv.mqttUrl ?? '';
});
afterAll(async () => srv.stop());

/** The proxy of the running server (this file starts it in process mode). */
function proxy(): BrokerProxy {
  const b = srv.broker;
  if (!(b instanceof BrokerProxy)) throw new Error('expected the broker in its own process');
  return b;
}

/** True while a process with this pid exists. */
function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

describe('MQTT_EMBEDDED_IN=process', () => {
  it('is the default (README "Broker"); inline is still accepted and anything else refused', () => {
    expect(loadConfig({}).MQTT_EMBEDDED_IN).toBe('process');
    expect(loadConfig({ MQTT_EMBEDDED_IN: 'inline' }).MQTT_EMBEDDED_IN).toBe('inline');
    expect(() => loadConfig({ MQTT_EMBEDDED_IN: 'thread' })).toThrow();
  });

  it('forks the broker when the server is started without MQTT_EMBEDDED_IN', async () => {
    const env = { ...process.env };
    delete env.MQTT_EMBEDDED_IN;
    const saved = process.env;
    process.env = env;
    const plain = await startTelemetryServer({}).finally(() => {
      process.env = saved;
    });
    try {
      expect(plain.broker).toBeInstanceOf(BrokerProxy);
      expect((plain.broker as BrokerProxy).pid).not.toBe(process.pid);
    } finally {
      await plain.stop();
    }
  });

  it('runs the broker in a child process of its own and reports it up', async () => {
    const pid = proxy().pid;
    expect(pid).not.toBeNull();
    expect(pid).not.toBe(process.pid);
    expect(alive(pid ?? 0)).toBe(true);
    const health = await request(srv.server).get('/api/v1/health');
    expect(health.status).toBe(200);
    expect(health.body.broker).toBe('up');
  });

  it('acknowledges a controller’s reading and stores it once, through the broker process', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const r = reading();
    await publishTelemetry(c, p.serial, r);
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length > 0 ? rs : null;
    });
    expect(rows.map((x) => Number(x.seq))).toEqual([r.seq]);
    await c.endAsync();
  });

  it('counts a refused sign-in in the server’s metrics', async () => {
    const p = await provisionBox(srv);
    const before = await metricValue(srv, 'rimehold_broker_refused_total', { reason: 'bad-credentials' });
    await expect(connectController(url, p.serial, 'not-the-secret')).rejects.toThrow(/Bad username or password/i);
    await waitFor(async () => (await metricValue(srv, 'rimehold_broker_refused_total', { reason: 'bad-credentials' })) === before + 1, 3000, 20);
  });

  it('reports connected controllers from the broker process', async () => {
    const p = await provisionBox(srv);
    const before = await metricValue(srv, 'rimehold_broker_connected_controllers');
    const c = await connectController(url, p.serial, p.secret);
    await waitFor(async () => (await metricValue(srv, 'rimehold_broker_connected_controllers')) === before + 1, 3000, 20);
    await c.endAsync();
    await waitFor(async () => (await metricValue(srv, 'rimehold_broker_connected_controllers')) === before, 3000, 20);
  });

  it('drops a signed-in controller when it is disabled on the server', async () => {
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const closed = new Promise<void>((r) => c.once('close', () => r()));
    await setDisabled(srv.ctx, p.controller, true);
    await closed;
    c.end(true);
    await expect(connectController(url, p.serial, p.secret)).rejects.toThrow(/Not authorized/i);
  });

  it('reports the broker down while its process is dead and starts it again on the same port', async () => {
    const b = proxy();
    const oldPid = b.pid ?? 0;
    const port = b.port;
    const restarts = b.restarts;
    process.kill(oldPid, 'SIGKILL');
    await waitFor(async () => (await request(srv.server).get('/api/v1/health')).status === 503, 5000, 10);
    const down = await request(srv.server).get('/api/v1/health');
    expect(down.body.broker).toBe('down');
    await waitFor(() => b.up, 30_000, 50);
    expect(b.pid).not.toBe(oldPid);
    expect(b.port).toBe(port);
    expect(b.restarts).toBe(restarts + 1);
    expect((await request(srv.server).get('/api/v1/health')).status).toBe(200);
    // The ingest reconnects on its own and the pipeline works again.
    const p = await provisionBox(srv);
    const c = await connectController(url, p.serial, p.secret);
    const r = reading();
    await publishTelemetry(c, p.serial, r);
    const rows = await waitFor(async () => {
      const rs = await storedRows(srv, p.box.id);
      return rs.length > 0 ? rs : null;
    }, 15_000);
    expect(rows.map((x) => Number(x.seq))).toEqual([r.seq]);
    await c.endAsync();
  }, 60_000);

  it('ends the process on stop() and does not start it again until start()', async () => {
    const b = proxy();
    const pid = b.pid ?? 0;
    const port = b.port;
    await b.stop();
    expect(alive(pid)).toBe(false);
    expect(b.up).toBe(false);
    // No restart after a deliberate stop.
    await new Promise((r) => setTimeout(r, 1500));
    expect(b.pid).toBeNull();
    await b.start();
    expect(b.up).toBe(true);
    expect(b.port).toBe(port);
  }, 30_000);

  it('rejects a first start whose process cannot listen, and starts no process behind the caller’s back', async () => {
    const c = srv.ctx.config;
    // The port of the running broker is taken: the second broker process fails to listen.
    const second = new BrokerProxy({
      host: '127.0.0.1', port: proxy().port, persistenceDir: mkdtempSync(path.join(os.tmpdir(), 'rimehold-broker-')), ingestUser: c.MQTT_INGEST_USER, ingestPassword: c.MQTT_INGEST_PASSWORD,
      simUser: null, simPassword: null, ingestQueueLimit: 1000, models: srv.ctx.models, bus: new EventBus(), metrics: createTelemetryMetrics(false), logger: createLogger('silent'), config: c,
    });
    await expect(second.start()).rejects.toThrow(/EADDRINUSE|exited/);
    await new Promise((r) => setTimeout(r, 1500));
    expect(second.pid).toBeNull();
    expect(second.up).toBe(false);
    expect(proxy().up).toBe(true);
  }, 30_000);
});
