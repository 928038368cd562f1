/**
 * npm run bench:ui — the fleet page under a full fleet, in Debian's Chromium (a benchmark, not a test):
 *   1. its own MariaDB (.data/mariadb-bench-PORT) and server on 127.0.0.1 free ports, the built client;
 *   2. seeds BENCH_UI_BOXES boxes (default 2,100; 20 customers, 200 sites in several time zones, 20 in
 *      21 with a controller, so 2,000 controllers) with bulk inserts;
 *   3. every controller reports every 10 s (the nominal fleet: 200 readings/s at 2,000 controllers)
 *      through scripts/bench/load.ts publishers in child processes, until the end;
 *   4. opens the fleet page on a cold cache and prints: first card and usable times, search latency,
 *      JS heap growth (after GC) and long-task share over BENCH_UI_MINUTES (default 10), the JS of the
 *      first page (as transferred, and gzip), DOM size, and GET /fleet/status p50/p95 over 50 requests.
 * Only 127.0.0.1 is used. Options: BENCH_UI_MINUTES, BENCH_UI_BOXES, CHROMIUM_PATH, BENCH_UI_ALARMS=0 to run the
 * server without its alarm service (to tell the page's own cost from the server's).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { gzipSync } from 'node:zlib';
import { QueryTypes } from 'sequelize';
import { chromium } from 'playwright-core';
import { MariaInstance } from '../lib/mariadb';
import { firstFreePort } from '../lib/ports';
import { projectRootFrom } from '../lib/root';
import { ensureClientBuilt } from '../lib/build';

process.env.TZ = 'UTC';
const root = projectRootFrom(import.meta.url, 2);
const MINUTES = Number(process.env.BENCH_UI_MINUTES ?? 10);
const BOXES = Number(process.env.BENCH_UI_BOXES ?? 2100);
const REPORT_EVERY_S = 10;
const PUBLISHERS = 2;
const ZONES = ['America/Chicago', 'America/New_York', 'Europe/Berlin', 'Europe/London', 'Asia/Tokyo', 'Australia/Sydney', 'UTC', 'America/Denver'];
const log = (m: string) => process.stderr.write(`[bench:ui] ${m}\n`);
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const pct = (xs: number[], p: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length ? Number((s[Math.min(s.length - 1, Math.floor(p * s.length))] ?? 0).toFixed(1)) : null;
};

ensureClientBuilt(root, false, log);
const port = await firstFreePort(3330);
const db = { name: 'rimehold_bench_ui', user: 'rimehold_bench', password: randomBytes(18).toString('base64url') };
const instance = new MariaInstance({ dataDir: path.join(root, '.data', `mariadb-bench-${port}`), port, bufferPoolMiB: 512, redoLogMiB: 256, log: () => {} });
await instance.start();
instance.ensureAppDatabase(db);
instance.resetDatabase(db.name);
Object.assign(process.env, {
  NODE_ENV: 'test', DB_HOST: '127.0.0.1', DB_PORT: String(port), DB_NAME: db.name, DB_USER: db.user, DB_PASSWORD: db.password, DB_EXTERNAL: '1',
  PORT: '0', MQTT_PORT: '0', SMTP_FAKE: '0', LOG_LEVEL: 'warn', DEMO_MODE: '0', SESSION_SECRET: randomBytes(24).toString('base64url'),
  MQTT_PERSISTENCE_DIR: mkdtempSync(path.join(os.tmpdir(), 'rimehold-bench-ui-broker-')),
  ALARMS_ENABLED: process.env.BENCH_UI_ALARMS === '0' ? '0' : '1',
});

const { loadConfig } = await import('../../server/config');
const { createSequelize } = await import('../../server/db/sequelize');
const { migrateUp } = await import('../../server/db/migrate');
const { startServer } = await import('../../server/main');
const { hashDeviceSecret } = await import('../../server/controllers/secrets');
const { hashSecret } = await import('../../server/auth/passwords');
const { initModels } = await import('../../server/models');
const config = loadConfig();
const results: Record<string, unknown> = { machine: `${os.cpus().length} cores, ${Math.round(os.totalmem() / 2 ** 30)} GiB`, boxes: BOXES, minutes: MINUTES };
const children: ChildProcess[] = [];

try {
  const seedDb = createSequelize(config);
  await migrateUp(seedDb);
  const models = initModels(seedDb);

  // Seed with bulk inserts: 20 customers, 200 sites, the boxes, their controllers, one admin.
  const t0 = performance.now();
  const customers = await models.Customer.bulkCreate(Array.from({ length: 20 }, (_, i) => ({ name: `Bench Customer ${String(i).padStart(2, '0')}`, contactName: null, contactEmail: null, contactPhone: null, notes: null })));
  const sites = await models.Site.bulkCreate(
    Array.from({ length: 200 }, (_, i) => ({ customerId: customers[i % 20]?.id ?? 0, name: `Bench Site ${String(i).padStart(3, '0')}`, address: null, timeZone: ZONES[i % ZONES.length] ?? 'UTC', elevationM: 0 })),
  );
  const siteRows = await models.Site.findAll({ attributes: ['id', 'customerId'], order: [['id', 'ASC']] });
  if (siteRows.length !== sites.length) throw new Error('site seed failed');
  await models.Box.bulkCreate(
    Array.from({ length: BOXES }, (_, i) => {
      const s = siteRows[i % siteRows.length];
      // Every 25th box runs colder than the publishers report, so the page shows drifting boxes too.
      const setpointC = i % 25 === 0 ? -2 : 2;
      return {
        siteId: s?.id ?? 0, customerId: s?.customerId ?? 0, name: `Bench box ${String(i).padStart(4, '0')}`, kind: 'cooler' as const, setpointC, differentialK: 1.5, highLimitC: 5, lowLimitC: -5, alarmDelayMin: 45, doorAlarmDelayMin: 5,
        refrigerant: 'R-448A', valveType: 'eev' as const, saturationMethod: 'pressure' as const, superheatTargetK: 3.3, defrostType: 'off-cycle' as const, defrostIntervalH: 6, defrostMaxMin: 40, defrostTerminationC: 5, dripMin: 2, fanDelayMin: 0,
      };
    }),
  );
  const boxRows = await models.Box.findAll({ attributes: ['id', 'name'], order: [['id', 'ASC']] });
  const secret = `bench-secret-${randomBytes(8).toString('hex')}`;
  const secretHash = hashDeviceSecret(secret);
  // 1 box in 21 has no controller (shown offline): 2,000 controllers among the default 2,100 boxes.
  const withController = boxRows.filter((_, i) => i % 21 !== 20);
  await models.Controller.bulkCreate(withController.map((b, i) => ({ boxId: b.id, serial: `U${String(i).padStart(5, '0')}`, secretHash, valveFullSteps: 1600, firmware: null, lastSeenAt: null, secretRotatedAt: null })));
  const creds = withController.map((_, i) => ({ serial: `U${String(i).padStart(5, '0')}`, secret }));
  const serialOfBox = new Map(withController.map((b, i) => [b.id, `U${String(i).padStart(5, '0')}`]));
  await models.User.create({ email: 'bench-ui@bench.example.com', name: 'Bench Admin', role: 'admin', customerId: null, passwordHash: await hashSecret('bench-password-1'), inviteTokenHash: null, inviteExpiresAt: null, invitedAt: null, lastLoginAt: null, lockedUntil: null });
  results.seedMs = Math.round(performance.now() - t0);
  results.controllers = creds.length;
  await seedDb.close();

  const srv = await startServer(config, { batchSize: 1000, batchWindowMs: 25 });
  try {
    // Publishers: each controller every REPORT_EVERY_S, spread over PUBLISHERS processes, for the whole run.
    const runSeconds = MINUTES * 60 + 600;
    for (let p = 0; p < PUBLISHERS; p++) {
      const mine = creds.filter((_, i) => i % PUBLISHERS === p);
      const child = spawn(process.execPath, [path.join(root, 'node_modules', 'tsx', 'dist', 'cli.mjs'), path.join(root, 'scripts', 'bench', 'load.ts'), '--mode=publish', `--url=${srv.mqttUrl ?? ''}`, `--creds=${JSON.stringify(mine)}`, `--seconds=${runSeconds}`, `--rate=${mine.length / REPORT_EVERY_S}`], {
        stdio: ['ignore', 'ignore', 'inherit'],
        env: { ...process.env, TZ: 'UTC' },
      });
      children.push(child);
    }
    const latestCount = async () => Number((await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM box_latest', { type: QueryTypes.SELECT }))[0]?.n ?? 0);
    const readingCount = async () => Number((await srv.ctx.sequelize.query<{ n: number }>('SELECT COUNT(*) AS n FROM readings', { type: QueryTypes.SELECT }))[0]?.n ?? 0);
    const waitUntil = Date.now() + 180_000;
    while ((await latestCount()) < creds.length * 0.95 && Date.now() < waitUntil) await sleep(1000);
    results.boxesReportingAtStart = await latestCount();
    log(`${results.boxesReportingAtStart} of ${creds.length} controllers reporting; opening the fleet page`);

    // Sign in over HTTP; the browser gets the session cookie and opens the fleet page on a cold cache.
    const pre = await fetch(`${srv.url}/api/v1/auth/csrf`);
    const preCookie = (pre.headers.get('set-cookie') ?? '').split(';')[0] ?? '';
    const { csrfToken } = (await pre.json()) as { csrfToken: string };
    const login = await fetch(`${srv.url}/api/v1/auth/login`, { method: 'POST', headers: { 'content-type': 'application/json', cookie: preCookie, 'x-csrf-token': csrfToken }, body: JSON.stringify({ email: 'bench-ui@bench.example.com', password: 'bench-password-1' }) });
    if (login.status !== 200) throw new Error(`bench sign-in failed: ${login.status}`);
    const cookie = (login.headers.get('set-cookie') ?? '').split(';')[0] ?? '';
    // One status call just before the page opens: tells a slow first card caused by a busy server from the page's own cost.
    const tProbe = performance.now();
    await (await fetch(`${srv.url}/api/v1/fleet/status`, { headers: { cookie: (login.headers.get('set-cookie') ?? '').split(';')[0] ?? '' } })).text();
    results.fleetStatusJustBeforePageMs = Math.round(performance.now() - tProbe);
    results.alarmService = process.env.ALARMS_ENABLED === '1' ? 'on' : 'off';
    const [cookieName, cookieValue] = [cookie.slice(0, cookie.indexOf('=')), cookie.slice(cookie.indexOf('=') + 1)];

    const browser = await chromium.launch({
      executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
      args: ['--no-sandbox', '--headless', '--disable-gpu', '--disable-dev-shm-usage', '--disable-background-networking', '--disable-component-update', '--no-first-run', '--enable-precise-memory-info'],
    });
    try {
      const context = await browser.newContext({ viewport: { width: 1366, height: 900 } });
      await context.addCookies([{ name: cookieName, value: cookieValue, url: srv.url }]);
      const page = await context.newPage();
      let crashed = false;
      const pageErrors: string[] = [];
      page.on('crash', () => (crashed = true));
      page.on('pageerror', (e) => pageErrors.push(e.message));
      await page.addInitScript(`
        window.__bench = { longTasks: [], firstCardAt: null };
        try { new PerformanceObserver((l) => { for (const e of l.getEntries()) window.__bench.longTasks.push([e.startTime, e.duration]); }).observe({ type: 'longtask', buffered: true }); } catch (e) {}
        // Usable, on the page's own clock: right after the first card, the next task types into the
        // search box; the time is taken when the frame after that keystroke is painted (no round trip to this script).
        window.__bench.usableAt = null;
        const typeOnce = () => { const i = document.querySelector('[data-test="fleet-search"]'); if (!i) return setTimeout(typeOnce, 10);
          i.value = 'b'; i.dispatchEvent(new Event('input', { bubbles: true }));
          requestAnimationFrame(() => setTimeout(() => { window.__bench.usableAt = performance.now(); i.value = ''; i.dispatchEvent(new Event('input', { bubbles: true })); }, 0)); };
        const mo = new MutationObserver(() => { if (window.__bench.firstCardAt === null && document.querySelector('[data-test="box-card"]')) { window.__bench.firstCardAt = performance.now(); mo.disconnect(); setTimeout(typeOnce, 0); } });
        mo.observe(document, { childList: true, subtree: true });
      `);
      const cdp = await context.newCDPSession(page);
      const heapMiB = async () => {
        await cdp.send('HeapProfiler.collectGarbage');
        const h = await cdp.send('Runtime.getHeapUsage');
        return Number((h.usedSize / 2 ** 20).toFixed(1));
      };

      const tNav = performance.now();
      await page.goto(`${srv.url}/`);
      await page.locator('[data-test="box-card"]').first().waitFor({ state: 'visible', timeout: 60_000 });
      const firstCardWallMs = performance.now() - tNav;
      // Usable: the search input takes a keystroke and the page paints the next frame. usableMs is the
      // page's own clock from navigation start (as firstCardMs), typed by the init script right after
      // the first card; usableWallMs is this script's own try, with its round trips to the browser.
      await page.evaluate(`(async () => { const i = document.querySelector('[data-test="fleet-search"]'); i.focus(); i.value = 'b'; i.dispatchEvent(new Event('input', { bubbles: true })); await new Promise((r) => requestAnimationFrame(() => r())); i.value = ''; i.dispatchEvent(new Event('input', { bubbles: true })); })()`);
      results.usableWallMs = Math.round(performance.now() - tNav);
      await page.waitForFunction('window.__bench.usableAt !== null', undefined, { timeout: 30_000 });
      results.usableMs = Math.round(Number(await page.evaluate('window.__bench.usableAt')));
      results.firstCardMs = Math.round(Number(await page.evaluate('window.__bench.firstCardAt')));
      results.firstCardWallMs = Math.round(firstCardWallMs);
      const firstCardBox = await page.locator('[data-test="box-card"]').first().getAttribute('data-box-id');

      // JS of the first page: as transferred (resource timing) and gzip-compressed (zlib default level).
      const jsUrls = (await page.evaluate(`performance.getEntriesByType('resource').filter((e) => /\\.m?js(\\?|$)/.test(e.name)).map((e) => [e.name, e.transferSize, e.decodedBodySize])`)) as Array<[string, number, number]>;
      let gzipBytes = 0;
      for (const [u] of jsUrls) gzipBytes += gzipSync(Buffer.from(await (await fetch(u)).arrayBuffer())).length;
      results.firstPageJs = { files: jsUrls.length, transferredKB: Math.round(jsUrls.reduce((n, [, t]) => n + t, 0) / 1024), decodedKB: Math.round(jsUrls.reduce((n, [, , d]) => n + d, 0) / 1024), gzipKB: Math.round(gzipBytes / 1024) };

      // Search: a box's full name narrows the grid to that card and the few others whose serial holds the
      // same digits (U00070…U00079 for "0007"): as many cards as boxes whose name or serial holds the
      // number, measured from the keystroke to the painted frame, debounce included; -1 when it never does.
      await sleep(5000);
      const searches: number[] = [];
      for (const i of [7, BOXES - 3, Math.floor(BOXES / 2)]) {
        const name = `Bench box ${String(i).padStart(4, '0')}`;
        const id = boxRows[i]?.id ?? 0;
        const digits = String(i).padStart(4, '0');
        const expected = boxRows.filter((b) => `${b.name} ${serialOfBox.get(b.id) ?? ''}`.includes(digits)).length;
        const ms = Number(
          await page.evaluate(`(async () => {
            const input = document.querySelector('[data-test="fleet-search"]');
            const t0 = performance.now();
            input.value = ${JSON.stringify(name)}; input.dispatchEvent(new Event('input', { bubbles: true }));
            return await new Promise((res) => { const check = () => {
              const cards = document.querySelectorAll('[data-test="box-card"]');
              if (cards.length === ${expected} && [...cards].some((c) => c.getAttribute('data-box-id') === '${id}')) res(performance.now() - t0);
              else if (performance.now() - t0 > 10000) res(-1); else requestAnimationFrame(check); }; check(); });
          })()`),
        );
        searches.push(ms);
        await page.evaluate(`(() => { const i = document.querySelector('[data-test="fleet-search"]'); i.value = ''; i.dispatchEvent(new Event('input', { bubbles: true })); })()`);
        await sleep(1000);
      }
      results.searchMs = { each: searches.map((s) => Math.round(s)), max: Math.round(Math.max(...searches)) };

      // The long window: live readings keep arriving; the page scrolls now and then like a person would.
      await sleep(10_000);
      const heapStartMiB = await heapMiB();
      const winStart = Number(await page.evaluate('performance.now()'));
      const samples: Array<{ atS: number; heapMiB: number; domNodes: number; probeMs: number }> = [];
      const readingsAtStart = await readingCount();
      const endAt = Date.now() + MINUTES * 60_000;
      let step = 0;
      while (Date.now() < endAt && !crashed) {
        await sleep(Math.min(15_000, Math.max(0, endAt - Date.now())));
        step += 1;
        await page.evaluate(`window.scrollTo(0, ${step % 3 === 0 ? 0 : (step * 7919) % 40_000})`);
        const tp = performance.now();
        const dom = Number(await page.evaluate('document.getElementsByTagName("*").length'));
        const probeMs = performance.now() - tp;
        const used = Number(await page.evaluate('performance.memory ? performance.memory.usedJSHeapSize : 0'));
        samples.push({ atS: Math.round((Date.now() - (endAt - MINUTES * 60_000)) / 1000), heapMiB: Number((used / 2 ** 20).toFixed(1)), domNodes: dom, probeMs: Math.round(probeMs) });
      }
      const winEnd = Number(await page.evaluate('performance.now()'));
      const heapEndMiB = await heapMiB();
      const longTasks = (await page.evaluate('window.__bench.longTasks')) as Array<[number, number]>;
      const inWindow = longTasks.filter(([s]) => s >= winStart && s < winEnd);
      const readingsDuring = (await readingCount()) - readingsAtStart;
      results.window = {
        seconds: Math.round((winEnd - winStart) / 1000),
        alive: !crashed,
        readingsStoredPerS: Math.round(readingsDuring / ((winEnd - winStart) / 1000)),
        heapAfterGcStartMiB: heapStartMiB,
        heapAfterGcEndMiB: heapEndMiB,
        heapGrowthMiB: Number((heapEndMiB - heapStartMiB).toFixed(1)),
        longTaskSharePct: Number(((inWindow.reduce((n, [, d]) => n + d, 0) / (winEnd - winStart)) * 100).toFixed(2)),
        longTasks: inWindow.length,
        longestTaskMs: Math.round(Math.max(0, ...inWindow.map(([, d]) => d))),
        maxProbeMs: Math.max(0, ...samples.map((s) => s.probeMs)),
        maxDomNodes: Math.max(0, ...samples.map((s) => s.domNodes)),
        samples,
      };
      results.firstCardBoxId = firstCardBox;
      results.pageErrors = pageErrors.slice(0, 5);
      await context.close();
    } finally {
      await browser.close();
    }

    // GET /fleet/status under the same load, 50 requests one after another (5 warm-up first).
    const times: number[] = [];
    let size = 0;
    for (let i = 0; i < 55; i++) {
      const t = performance.now();
      const res = await fetch(`${srv.url}/api/v1/fleet/status`, { headers: { cookie } });
      const body = await res.text();
      if (i >= 5) times.push(performance.now() - t);
      size = body.length;
    }
    results.fleetStatus = { requests: times.length, boxes: BOXES, bodyKB: Math.round(size / 1024), p50Ms: pct(times, 0.5), p95Ms: pct(times, 0.95) };
  } finally {
    for (const c of children) c.kill('SIGTERM');
    await srv.stop();
  }
} finally {
  for (const c of children) if (c.exitCode === null) c.kill('SIGKILL');
  await instance.stop(true);
}

const w = results.window as { heapGrowthMiB: number; longTaskSharePct: number; alive: boolean } | undefined;
const fs = results.fleetStatus as { p95Ms: number } | undefined;
const js = results.firstPageJs as { gzipKB: number } | undefined;
const s = results.searchMs as { each: number[]; max: number } | undefined;
results.goals = {
  firstCardUnder1500Ms: Number(results.firstCardMs) < 1500,
  usableUnder1500Ms: Number(results.usableMs) < 1500,
  searchUnder500Ms: s ? s.each.every((x) => x >= 0) && s.max < 500 : false,
  heapGrowthUnder50MiB: w ? w.heapGrowthMiB < 50 : false,
  longTasksUnder10Pct: w ? w.longTaskSharePct < 10 : false,
  aliveThroughout: w ? w.alive : false,
  firstPageJsUnder350KBGzip: js ? js.gzipKB < 350 : false,
  fleetStatusP95Under100Ms: fs ? fs.p95Ms < 100 : false,
};
console.log(JSON.stringify(results, null, 2));
