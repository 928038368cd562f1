/**
 * Keyboard only, at 1366×900 and 390×844: signing in with Tab and Enter, and acknowledging an alarm on
 * its page with Tab and Enter. No mouse or touch event is sent in these tests.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, BrowserContextOptions, Page } from 'playwright-core';
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { factories } from '../server/helpers/app';
import { startTelemetryServer } from '../server/helpers/telemetry';
import { raiseBoxAirAlarm } from './helpers/alarm';
import { PHONE, launchChromium, migrateTestDb, newPage, resultsPath } from './helpers/browser';

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

interface FocusWindow {
  document: { activeElement: { matches(sel: string): boolean } | null };
}

/** Presses Tab until the focused element matches selector; fails after max presses. Returns the presses used. */
async function tabTo(page: Page, selector: string, max = 80): Promise<number> {
  for (let i = 1; i <= max; i++) {
    await page.keyboard.press('Tab');
    const there = await page.evaluate((sel) => (globalThis as unknown as FocusWindow).document.activeElement?.matches(sel) ?? false, selector);
    if (there) return i;
  }
  throw new Error(`${selector} not reached with ${max} Tab presses`);
}

/** Signs in with the keyboard alone and waits for the app shell. */
async function keyboardSignIn(page: Page, email: string, password: string): Promise<void> {
  await page.goto('/sign-in');
  await page.locator('[data-test="sign-in-form"]').waitFor();
  await tabTo(page, 'input[name="email"]');
  await page.keyboard.type(email);
  // The password field is the very next stop after the e-mail field.
  expect(await tabTo(page, 'input[name="password"]', 1)).toBe(1);
  await page.keyboard.type(password);
  await page.keyboard.press('Enter');
  await page.locator('[data-test="app-shell"]').waitFor({ state: 'visible', timeout: 15_000 });
}

describe.each(SIZES)('keyboard only at $label size', ({ label, opts }) => {
  it('signs in with Tab, typing and Enter', async () => {
    const f = factories(srv);
    const customer = await f.customer();
    const manager = await f.user('manager', customer.id);
    const { context, page, pageErrors } = await newPage(browser, srv.url, { ...opts, hasTouch: false });
    try {
      await keyboardSignIn(page, manager.email, manager.password);
      expect(new URL(page.url()).pathname).toBe('/');
      const stored = await srv.ctx.models.User.findByPk(manager.user.id);
      expect(stored?.lastLoginAt).not.toBeNull();
      await page.screenshot({ path: resultsPath(`keyboard-signed-in-${label}.png`) });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });

  it('acknowledges an alarm on its page with Tab, a typed note and Enter', async () => {
    const { ctl, alarmId } = await raiseBoxAirAlarm(srv);
    controllers.push(ctl);
    const tech = await factories(srv).user('technician');
    const { context, page, pageErrors } = await newPage(browser, srv.url, { ...opts, hasTouch: false });
    try {
      await keyboardSignIn(page, tech.email, tech.password);
      await page.goto(`/alarms/${alarmId}`);
      await page.locator('[data-test="detail-ack"]').waitFor();
      expect((await srv.ctx.models.Alarm.findByPk(alarmId))?.state).toBe('unacknowledged');

      await tabTo(page, '[data-test="ack-note"] textarea');
      await page.keyboard.type('Checked by keyboard');
      await tabTo(page, 'button[data-test="detail-ack"]', 3);
      await page.keyboard.press('Enter');

      await expect.poll(async () => (await srv.ctx.models.Alarm.findByPk(alarmId))?.state, { timeout: 10_000 }).toBe('acknowledged');
      await expect.poll(() => page.locator('[data-test="alarm-state"]').innerText(), { timeout: 10_000 }).toContain('Acknowledged, still active');
      const transitions = await srv.ctx.models.AlarmTransition.findAll({ where: { alarmId } });
      expect(transitions.filter((t) => t.toState === 'acknowledged').map((t) => t.note)).toEqual(['Checked by keyboard']);
      await page.screenshot({ path: resultsPath(`keyboard-acknowledged-${label}.png`) });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });
});
