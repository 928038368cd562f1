// The client's assets and larger API answers go out gzip-compressed when the browser accepts it;
// small answers are sent as they are (threshold 1 KiB).
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { AddressInfo } from 'node:net';
import http from 'node:http';
import { gunzipSync } from 'node:zlib';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../server/main';
import { createApp } from '../../server/app';
import { SettingsService } from '../../server/telemetry/settings';
import { startTestServer } from './helpers/app';

let srv: RunningServer;
let tmp: string;
let app: ReturnType<typeof createApp>['app'];
const BIG_JS = `console.log(${JSON.stringify('rimehold '.repeat(2_000))});`;

beforeAll(async () => {
  srv = await startTestServer();
  tmp = mkdtempSync(path.join(os.tmpdir(), 'rimehold-gzip-'));
  const clientDir = path.join(tmp, 'dist', 'client');
  mkdirSync(path.join(clientDir, 'assets'), { recursive: true });
  writeFileSync(path.join(clientDir, 'index.html'), '<!doctype html><title>t</title>');
  writeFileSync(path.join(clientDir, 'assets', 'big-1.js'), BIG_JS);
  writeFileSync(path.join(clientDir, 'assets', 'tiny-1.js'), 'console.log(1);');
  app = createApp(srv.ctx, new SettingsService(srv.ctx), { clientDir }).app;
});
afterAll(async () => {
  await srv.stop();
  rmSync(tmp, { recursive: true, force: true });
});

describe('compressed answers', () => {
  it('sends a large script gzip-compressed to a browser that accepts gzip, and the bytes unpack to the file', async () => {
    // Raw bytes over a plain socket (supertest would unpack them silently).
    const server = app.listen(0, '127.0.0.1');
    await new Promise((r) => server.once('listening', r));
    const port = (server.address() as AddressInfo).port;
    const raw = await new Promise<{ status: number; encoding: string | undefined; body: Buffer }>((resolve, reject) => {
      http.get({ host: '127.0.0.1', port, path: '/assets/big-1.js', headers: { 'accept-encoding': 'gzip' } }, (res) => {
        const chunks: Buffer[] = [];
        res.on('data', (c: Buffer) => chunks.push(c));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, encoding: res.headers['content-encoding'], body: Buffer.concat(chunks) }));
      }).on('error', reject);
    }).finally(() => server.close());
    expect(raw.status).toBe(200);
    expect(raw.encoding).toBe('gzip');
    expect(raw.body.length).toBeLessThan(BIG_JS.length / 10);
    expect(gunzipSync(raw.body).toString()).toBe(BIG_JS);
  });
  it('sends a small file and a client without gzip uncompressed', async () => {
    const tiny = await request(app).get('/assets/tiny-1.js').set('Accept-Encoding', 'gzip');
    expect(tiny.headers['content-encoding']).toBeUndefined();
    const plain = await request(app).get('/assets/big-1.js').set('Accept-Encoding', 'identity');
    expect(plain.headers['content-encoding']).toBeUndefined();
    expect(plain.text).toBe(BIG_JS);
  });
});
