/** Field calculators on a phone (390×844): P–T lookup, refrigerant cautions, superheat verdict. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import type { RunningServer } from '../../server/main';
import { CAUTIONS } from '../../shared/safety';
import { factories, startTestServer } from '../server/helpers/app';
import { PHONE, launchChromium, migrateTestDb, newPage, numberIn, resultsPath, signInUi } from './helpers/browser';

let srv: RunningServer;
let browser: Browser;
let tech: { email: string; password: string };

beforeAll(async () => {
  await migrateTestDb();
  srv = await startTestServer();
  tech = await factories(srv).user('technician');
  browser = await launchChromium();
});

afterAll(async () => {
  await browser?.close();
  await srv?.stop();
});

/** A signed-in phone page on the given calculator path; closes the context afterwards. */
async function onPhone(path: string, body: (page: Page) => Promise<void>): Promise<void> {
  const { context, page, pageErrors } = await newPage(browser, srv.url, PHONE);
  try {
    await signInUi(page, tech.email, tech.password);
    await page.goto(path);
    await page.locator('[data-test="cautions"]').waitFor();
    await body(page);
    expect(pageErrors).toEqual([]);
  } finally {
    await context.close();
  }
}

const cautionKeys = (page: Page) => page.locator('[data-test="cautions"] [data-test^="caution-"]').evaluateAll((els) => els.map((e) => e.getAttribute('data-test')));

describe('P–T calculator on a phone', () => {
  it('R-134a at 6.5 psig reads a dew point within 0.5 °F of 0 °F', async () => {
    await onPhone('/tools/pressure-temperature?refrigerant=R-134a', async (page) => {
      expect(await page.locator('[data-test="pt-dew"]').innerText()).toBe('—');
      await page.locator('input[data-test="pt-pressure"]').fill('6.5');
      // R-134a saturation 0 °F = 6.5 psig at sea level: NIST-REFPROP-based P-T chart on calcspec.com (TRADE-NOTES check value 19).
      await expect.poll(async () => numberIn(await page.locator('[data-test="pt-dew"]').innerText())).not.toBeNaN();
      const dew = await page.locator('[data-test="pt-dew"]').innerText();
      expect(dew).toContain('°F');
      expect(Math.abs(numberIn(dew) - 0)).toBeLessThanOrEqual(0.5);
      // R-134a is a single-component refrigerant (ASHRAE 34 numbers blends in the 400/500 series; from memory): bubble = dew, no glide.
      expect(numberIn(await page.locator('[data-test="pt-bubble"]').innerText())).toBeCloseTo(numberIn(dew), 1);
      // R-134a is ASHRAE 34 class A1 (from memory): neither the flammable nor the high-pressure caution.
      expect(await cautionKeys(page)).toEqual(['caution-refrigerantHandling', 'caution-notADiagnosis']);
      await page.screenshot({ path: resultsPath('pt-r134a-phone.png'), fullPage: true });
    });
  });

  it('R-290 (ASHRAE 34 class A3) shows the flammable-refrigerant caution', async () => {
    await onPhone('/tools/pressure-temperature?refrigerant=R-290', async (page) => {
      const c = page.locator('[data-test="caution-flammable"]');
      await c.waitFor({ state: 'visible' });
      expect(await c.locator('h4').innerText()).toContain(CAUTIONS.flammable.title);
      expect((await c.locator('p').innerText()).trim()).toBe(CAUTIONS.flammable.text);
      expect(await page.locator('[data-test="caution-highPressure"]').count()).toBe(0);
    });
  });

  it('R-744 (CO₂) shows the high-pressure caution', async () => {
    await onPhone('/tools/pressure-temperature?refrigerant=R-744', async (page) => {
      const c = page.locator('[data-test="caution-highPressure"]');
      await c.waitFor({ state: 'visible' });
      expect(await c.locator('h4').innerText()).toContain(CAUTIONS.highPressure.title);
      expect((await c.locator('p').innerText()).trim()).toBe(CAUTIONS.highPressure.text);
      // R-744 is ASHRAE 34 class A1 (from memory): not flammable.
      expect(await page.locator('[data-test="caution-flammable"]').count()).toBe(0);
    });
  });
});

describe('superheat calculator on a phone', () => {
  // Default target band 8 ± 2 °F: the calculator's default, from memory (TRADE-NOTES §3, see SuperheatView.vue).
  it('R-134a: gives an "In band" verdict for 8 °F superheat and "Low" for 2 °F (default target 8 ± 2 °F)', async () => {
    await onPhone('/tools/superheat?refrigerant=R-134a', async (page) => {
      const verdict = page.locator('[data-test="sh-verdict"]');
      const result = page.locator('[data-test="sh-result"]');
      // R-134a saturation 20 °F = 18.4 psig: NIST-REFPROP-based P-T chart on calcspec.com (TRADE-NOTES check value 19).
      await page.locator('input[data-test="sh-suction-pressure"]').fill('18.4');
      // Superheat = suction-line temperature − saturated suction (dew) temperature: common practice.
      await page.locator('input[data-test="sh-suction-line"]').fill('28');
      await expect.poll(async () => numberIn(await result.innerText())).not.toBeNaN();
      expect(Math.abs(numberIn(await result.innerText()) - 8)).toBeLessThanOrEqual(0.5);
      expect(Math.abs(numberIn(await page.locator('[data-test="sh-saturated"]').innerText()) - 20)).toBeLessThanOrEqual(0.5);
      await expect.poll(() => verdict.innerText()).toMatch(/^In band/);
      await page.screenshot({ path: resultsPath('superheat-in-band-phone.png'), fullPage: true });

      await page.locator('input[data-test="sh-suction-line"]').fill('22');
      await expect.poll(async () => numberIn(await result.innerText())).toBeLessThan(3);
      await expect.poll(() => verdict.innerText()).toMatch(/^Low/);
      expect(await verdict.innerText()).not.toContain('In band');
    });
  });
});
