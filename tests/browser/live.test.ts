/** Live fleet: a reading published by a controller reaches the open fleet page without a reload. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { factories } from '../server/helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer } from '../server/helpers/telemetry';
import { DESKTOP, type InPage, launchChromium, migrateTestDb, newPage, numberIn, resultsPath, signInUi } from './helpers/browser';

let srv: RunningServer;
let browser: Browser;
let ctl: MqttClient | null = null;

beforeAll(async () => {
  await migrateTestDb();
  srv = await startTelemetryServer();
  browser = await launchChromium();
});

afterAll(async () => {
  await ctl?.endAsync();
  await browser?.close();
  await srv?.stop();
});

describe('fleet page, live', () => {
  it("updates the box card's temperature from a published reading, in the manager's units (imperial by default)", async () => {
    const p = await provisionBox(srv);
    const manager = await factories(srv).user('manager', p.customer.id);
    const { context, page, pageErrors } = await newPage(browser, srv.url, DESKTOP);
    try {
      await signInUi(page, manager.email, manager.password);
      const card = page.locator(`[data-test="box-card"][data-box-id="${p.box.id}"]`);
      await card.waitFor();
      expect(await page.locator('[data-test="box-card"]').count()).toBe(1);
      const temp = card.locator('[data-test="box-temp"]');
      // No reading yet: the card shows a dash.
      expect((await temp.innerText()).trim()).toBe('—');
      await expect.poll(() => page.locator('[data-test="live-status"]').innerText(), { timeout: 10_000 }).toContain('Live');

      // A marker on window survives only if the page is not reloaded.
      await page.evaluate(() => {
        (globalThis as unknown as InPage).rimeholdNoReloadMarker = 'set-before-publish';
      });
      let navigations = 0;
      page.on('framenavigated', (f) => {
        if (f === page.mainFrame()) navigations += 1;
      });

      ctl = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
      await publishTelemetry(ctl, p.serial, reading({ boxAirC: 3.7 }));

      // 3.7 °C × 9/5 + 32 = 38.66 °F (the Celsius–Fahrenheit definition; shown to one decimal).
      await expect.poll(async () => numberIn(await temp.innerText()), { timeout: 10_000 }).toBeCloseTo(38.7, 1);
      expect(Math.abs(numberIn(await temp.innerText()) - 38.7)).toBeLessThanOrEqual(0.1);
      expect(await temp.innerText()).toContain('°F');
      expect(await page.evaluate(() => (globalThis as unknown as InPage).rimeholdNoReloadMarker)).toBe('set-before-publish');
      expect(navigations).toBe(0);
      expect(await card.innerText()).toContain('Online');
      await page.screenshot({ path: resultsPath('live-fleet-desktop.png') });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });
});
