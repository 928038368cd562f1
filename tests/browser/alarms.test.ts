/**
 * The on-call technician at phone size: an alarm raised by readings over MQTT appears on the open
 * alarm page without a reload, one tap acknowledges it, and the state shown changes at once.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { factories } from '../server/helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer } from '../server/helpers/telemetry';
import { PHONE, type InPage, launchChromium, migrateTestDb, newPage, resultsPath, signInUi } from './helpers/browser';

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

describe('alarm page at 390×844', () => {
  it('shows a raised box-air alarm live and acknowledges it with one tap', async () => {
    // A cooler with the 41 °F / 5 °C cold-holding limit (FDA Food Code 3-501.16(A)(2)) and a 5-minute delay.
    const p = await provisionBox(srv, { highLimitC: 5, alarmDelayMin: 5 });
    const tech = await factories(srv).user('technician');
    const { context, page, pageErrors } = await newPage(browser, srv.url, PHONE);
    try {
      await signInUi(page, tech.email, tech.password);
      await page.goto('/alarms');
      await expect.poll(() => page.locator('[data-test="live-status"]').innerText(), { timeout: 10_000 }).toContain('Live');
      await page.evaluate(() => {
        (globalThis as unknown as InPage).rimeholdNoReloadMarker = 'before-alarm';
      });

      // 9 °C box air for 8 minutes of reading time (delays run on reading time, not arrival).
      ctl = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
      const start = Date.now() - 8 * 60_000;
      for (let i = 0; i <= 16; i++) await publishTelemetry(ctl, p.serial, reading({ boxAirC: 9, ts: new Date(start + i * 30_000).toISOString() }));

      const row = page.locator(`[data-test="alarm-row"]`).filter({ hasText: p.box.name }).first();
      await row.waitFor({ timeout: 15_000 });
      expect(await row.getAttribute('data-state')).toBe('unacknowledged');
      expect(await page.evaluate(() => (globalThis as unknown as InPage).rimeholdNoReloadMarker)).toBe('before-alarm');
      await page.screenshot({ path: resultsPath('alarms-phone-raised.png') });

      await row.locator('[data-test="alarm-ack"]').tap();
      await expect.poll(() => row.getAttribute('data-state'), { timeout: 10_000 }).toBe('acknowledged');
      const alarmId = Number(await row.getAttribute('data-alarm-id'));
      const stored = await srv.ctx.models.Alarm.findByPk(alarmId);
      expect(stored?.state).toBe('acknowledged');
      await page.screenshot({ path: resultsPath('alarms-phone-acknowledged.png') });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });
});
