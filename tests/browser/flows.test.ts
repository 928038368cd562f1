/**
 * Three user flows in a real browser at 1366×900 and 390×844: a manager's fleet is only their own and
 * updates live; a technician's superheat target goes pending, then applied by a simulated controller;
 * the CSV import shows a rejected row with its reason.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, BrowserContextOptions } from 'playwright-core';
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { ConfigSetPayload, topics } from '../../shared/schemas/telemetry';
import { factories } from '../server/helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer } from '../server/helpers/telemetry';
import { PHONE, launchChromium, migrateTestDb, newPage, numberIn, resultsPath, signInUi } from './helpers/browser';

const WIDE: BrowserContextOptions = { viewport: { width: 1366, height: 900 } };
const SIZES = [
  { label: 'wide', opts: WIDE },
  { label: 'phone', opts: PHONE },
] as const;

let srv: RunningServer;
let browser: Browser;
const controllers: MqttClient[] = [];

beforeAll(async () => {
  await migrateTestDb();
  srv = await startTelemetryServer();
  browser = await launchChromium();
});

afterAll(async () => {
  for (const c of controllers) await c.endAsync();
  await browser?.close();
  await srv?.stop();
});

async function controllerFor(serial: string, secret: string): Promise<MqttClient> {
  const c = await connectController(srv.mqttUrl ?? '', serial, secret);
  controllers.push(c);
  return c;
}

describe.each(SIZES)('at $label size', ({ label, opts }) => {
  it('a manager sees only the boxes of their own customer, and a published reading changes a card live', async () => {
    const mine = await provisionBox(srv);
    const f = factories(srv);
    const secondBox = await f.box(mine.site.id, mine.customer.id);
    const other = await provisionBox(srv); // another customer's box, which the manager must not see
    const manager = await f.user('manager', mine.customer.id);
    const { context, page, pageErrors } = await newPage(browser, srv.url, opts);
    try {
      await signInUi(page, manager.email, manager.password);
      const cards = page.locator('[data-test="box-card"]');
      await cards.first().waitFor();
      await expect.poll(async () => (await cards.evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-box-id'))))).sort((a, b) => a - b)).toEqual(
        [mine.box.id, secondBox.id].sort((a, b) => a - b),
      );
      expect(await page.locator(`[data-test="box-card"][data-box-id="${other.box.id}"]`).count()).toBe(0);
      expect(await page.locator('main').innerText()).not.toContain(other.box.name);

      await expect.poll(() => page.locator('[data-test="live-status"]').innerText(), { timeout: 10_000 }).toContain('Live');
      const temp = page.locator(`[data-test="box-card"][data-box-id="${mine.box.id}"] [data-test="box-temp"]`);
      const ctl = await controllerFor(mine.serial, mine.secret);
      await publishTelemetry(ctl, mine.serial, reading({ boxAirC: 1.5 }));
      // 1.5 °C × 9/5 + 32 = 34.7 °F (the Celsius–Fahrenheit definition); the manager's units are imperial by default.
      await expect.poll(async () => numberIn(await temp.innerText()), { timeout: 10_000 }).toBeCloseTo(34.7, 1);
      await publishTelemetry(ctl, mine.serial, reading({ boxAirC: 4 }));
      // 4 °C = 39.2 °F (same definition): a second reading moves the same card again, without a reload.
      await expect.poll(async () => numberIn(await temp.innerText()), { timeout: 10_000 }).toBeCloseTo(39.2, 1);
      await page.screenshot({ path: resultsPath(`flow-manager-fleet-${label}.png`) });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });

  it('a technician changes the superheat target, sees it pending, then applied once the controller acknowledges it', async () => {
    const p = await provisionBox(srv); // an EEV cooler with a 3.3 K superheat target (tests/server/helpers/app.ts boxBody)
    const tech = await factories(srv).user('technician');
    // The simulated controller: receives config/set and answers config/ack only when the test says so.
    const ctl = await controllerFor(p.serial, p.secret);
    await ctl.subscribeAsync(topics.configSet(p.serial), { qos: 1 });
    const received = new Promise<ConfigSetPayload>((resolve) => ctl.on('message', (_t, m) => resolve(ConfigSetPayload.parse(JSON.parse(m.toString())))));
    const { context, page, pageErrors } = await newPage(browser, srv.url, opts);
    try {
      await signInUi(page, tech.email, tech.password);
      await page.goto(`/boxes/${p.box.id}`);
      const input = page.locator('input[data-test="settings-superheat"]');
      await input.waitFor();
      // 3.3 K × 9/5 = 5.94 °F difference, shown to one decimal (kelvin–Fahrenheit difference definition).
      expect(numberIn(await input.inputValue())).toBeCloseTo(5.9, 1);
      await input.fill('9');
      await page.locator('[data-test="settings-send"]').click();

      const cfg = await received;
      // 9 °F difference × 5/9 = 5 K (same definition).
      expect(cfg.superheatTargetK).toBeCloseTo(5, 6);
      const change = page.locator('[data-test="settings-change"]').first();
      await expect.poll(() => change.getAttribute('data-state'), { timeout: 10_000 }).toBe('pending');
      expect(await change.innerText()).toContain('Waiting for the controller');
      await page.screenshot({ path: resultsPath(`flow-settings-pending-${label}.png`) });

      await ctl.publishAsync(topics.configAck(p.serial), JSON.stringify({ id: cfg.id, ok: true, applied: { superheatTargetK: cfg.superheatTargetK } }), { qos: 1 });
      await expect.poll(() => change.getAttribute('data-state'), { timeout: 10_000 }).toBe('applied');
      expect(await change.innerText()).toContain('Applied');
      await p.box.reload();
      expect(p.box.superheatTargetK).toBeCloseTo(5, 6);
      await page.screenshot({ path: resultsPath(`flow-settings-applied-${label}.png`) });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });

  it('the CSV import rejects a row with an unknown customer and says why, and imports nothing', async () => {
    const f = factories(srv);
    const customer = await f.customer();
    const site = await f.site(customer.id);
    const admin = await f.user('admin');
    const header = 'customer,site,box_name,kind,refrigerant,setpoint,unit,high_limit,low_limit,valve_type,controller_serial,valve_full_steps,firmware';
    const goodName = `Good walk-in ${label}`;
    const csv = [
      header,
      `${customer.name},${site.name},${goodName},cooler,R-448A,36,F,41,30,eev,,,`,
      `No Such Customer ${label},${site.name},Bad walk-in,cooler,R-448A,36,F,41,30,eev,,,`,
    ].join('\n');
    const { context, page, pageErrors } = await newPage(browser, srv.url, opts);
    try {
      await signInUi(page, admin.email, admin.password);
      await page.goto('/import');
      await page.locator('[data-test="import-file"]').setInputFiles({ name: 'boxes.csv', mimeType: 'text/csv', buffer: Buffer.from(csv, 'utf8') });
      await page.locator('[data-test="import-summary"]').waitFor({ timeout: 10_000 });
      const statuses = page.locator('[data-test="import-row-status"]');
      await expect.poll(() => statuses.count()).toBe(2);
      const reasons = page.locator('[data-test="import-row-reasons"]');
      expect(await reasons.count()).toBe(1);
      expect(await reasons.innerText()).toContain(`customer: unknown customer "No Such Customer ${label}"`);
      // All or nothing: with a rejected row the import cannot start, and nothing was stored by the check.
      expect(await page.locator('[data-test="import-run"]').isDisabled()).toBe(true);
      expect(await srv.ctx.models.Box.count({ where: { name: goodName } })).toBe(0);
      await page.screenshot({ path: resultsPath(`flow-import-rejected-${label}.png`), fullPage: true });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });
});
