/**
 * The box page in Chromium: the history chart renders on canvas with its shaded periods, the cycle
 * timers read from the stored readings, and a live reading that stops the compressor restarts the timer.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser } from 'playwright-core';
import type { MqttClient } from 'mqtt';
import type { RunningServer } from '../../server/main';
import { sqlTs } from '../../server/db/sequelize';
import { factories } from '../server/helpers/app';
import { connectController, provisionBox, publishTelemetry, reading, startTelemetryServer } from '../server/helpers/telemetry';
import { DESKTOP, PHONE, launchChromium, migrateTestDb, newPage, resultsPath, signInUi } from './helpers/browser';

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

const MIN = 60_000;

/** Two hours of raw readings a minute apart: a 20-min defrost 90 min ago, the door open 30–27 min ago, the compressor on for the last 10 min. */
async function insertHistory(boxId: number, nowMs: number) {
  const rows: string[] = [];
  const args: Array<string | number> = [];
  let seq = 1;
  for (let t = nowMs - 120 * MIN; t <= nowMs - MIN; t += MIN) {
    const defrost = t >= nowMs - 90 * MIN && t < nowMs - 70 * MIN;
    const door = t >= nowMs - 30 * MIN && t < nowMs - 27 * MIN;
    const comp = !defrost && (t < nowMs - 40 * MIN || t >= nowMs - 10 * MIN);
    rows.push("(?, ?, ?, ?, 'R-448A', ?, 250, -2, ?, 1, ?, ?)");
    args.push(boxId, sqlTs(t), seq++, sqlTs(t), 2 + Math.sin(t / 600_000), comp ? 1 : 0, defrost ? 1 : 0, door ? 1 : 0);
  }
  await srv.ctx.sequelize.query(
    `INSERT INTO readings (box_id, ts, seq, received_at, refrigerant, box_air_c, suction_kpa_g, suction_line_c, compressor_on, fan_on, defrost_on, door_open) VALUES ${rows.join(',')}`,
    { replacements: args },
  );
}

describe('box page chart and cycle timers', () => {
  for (const [label, opts] of [
    ['desktop', DESKTOP],
    ['phone', PHONE],
  ] as const) {
    it(`draws the chart and the timers without page errors (${label})`, async () => {
      const p = await provisionBox(srv);
      const now = Math.floor(Date.now() / MIN) * MIN;
      await insertHistory(p.box.id, now);
      const tech = await factories(srv).user('technician');
      const { context, page, pageErrors } = await newPage(browser, srv.url, opts);
      try {
        await signInUi(page, tech.email, tech.password);
        await page.goto(`/boxes/${p.box.id}`);
        await page.locator('[data-test="range-6h"]').click();
        await page.locator('[data-test="readings-chart"] canvas').first().waitFor({ timeout: 15_000 });
        await expect.poll(() => page.locator('[data-test="chart-resolution"]').innerText(), { timeout: 10_000 }).toContain('every reading');
        // The chart reads in the site's zone and says which (the browser runs in UTC).
        await expect.poll(() => page.locator('[data-test="chart-zone"]').innerText(), { timeout: 10_000 }).toContain(p.site.timeZone);
        await expect.poll(() => page.locator('[data-test="cycle-compressor"]').innerText(), { timeout: 10_000 }).toMatch(/^Running for (9|10|11) min$/);
        expect(await page.locator('[data-test="cycle-defrost-last"]').innerText()).toMatch(/^Ended 1 h (09|10|11) min ago$/);
        // Next defrost: the 90-min-old start + the box's 6 h interval (tests/server/helpers/app boxBody) → in about 4 h 30 min.
        expect(await page.locator('[data-test="cycle-defrost-next"]').innerText()).toMatch(/^In 4 h (28|29|30) min/);
        await page.screenshot({ path: resultsPath(`box-chart-${label}.png`), fullPage: true });
        await page.locator('[data-test="readings-chart"]').screenshot({ path: resultsPath(`box-chart-only-${label}.png`) });
        await page.locator('[data-test="cycle-timers"]').screenshot({ path: resultsPath(`box-cycle-timers-${label}.png`) });

        if (label === 'desktop') {
          ctl = await connectController(srv.mqttUrl ?? '', p.serial, p.secret);
          await publishTelemetry(ctl, p.serial, reading({ ts: new Date().toISOString(), compressorOn: false }));
          await expect.poll(() => page.locator('[data-test="cycle-compressor"]').innerText(), { timeout: 10_000 }).toMatch(/^Off for \d+ s$/);
          await ctl.endAsync();
          ctl = null;
        }
        expect(pageErrors).toEqual([]);
      } finally {
        await context.close();
      }
    });
  }
});
