/** The signed-in shell in a real browser: per role and viewport, sign-in, nav, layout, font, sign-out. */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, Page } from 'playwright-core';
import type { RunningServer } from '../../server/main';
import type { Role } from '../../shared/domain';
import { problems } from '../../server/http/problem';
import { factories, startTestServer } from '../server/helpers/app';
import { DESKTOP, PHONE, type InPage, launchChromium, migrateTestDb, newPage, resultsPath, signInUi, submitSignIn } from './helpers/browser';

// The server's own wording for a failed sign-in, shown as it is by the sign-in page.
const problems401Detail = problems.badCredentials().detail;

let srv: RunningServer;
let browser: Browser;
const accounts = {} as Record<Role, { email: string; password: string }>;

beforeAll(async () => {
  await migrateTestDb();
  // SMTP_FAKE=1 offers the dev mailbox, so the admin's nav includes it (set here so the expectation below is ours).
  srv = await startTestServer({ SMTP_FAKE: '1', SMTP_PORT: '0' });
  const f = factories(srv);
  const customer = await f.customer();
  const site = await f.site(customer.id);
  await f.box(site.id, customer.id);
  for (const role of ['admin', 'technician', 'manager'] as const) {
    const { email, password } = await f.user(role, role === 'manager' ? customer.id : null);
    accounts[role] = { email, password };
  }
  browser = await launchChromium();
});

afterAll(async () => {
  await browser?.close();
  await srv?.stop();
});

// What each role may reach, from src/lib/nav.ts and the route roles in src/router/routes.ts.
const PRIMARY = ['nav-fleet', 'nav-alarms', 'nav-tool-pt', 'nav-tool-superheat'];
const RECORDS = ['Service visits', 'Refrigerant log', 'Food-safety log', 'Trends'];
const SECONDARY: Record<Role, string[]> = {
  manager: [...RECORDS],
  technician: [...RECORDS, 'Customers', 'Sites', 'Boxes'],
  admin: [...RECORDS, 'Customers', 'Sites', 'Boxes', 'Import', 'Users', 'Controllers', 'Dev mailbox', 'Push inbox'],
};
const SECONDARY_TEST_IDS: Record<string, string> = {
  'Service visits': 'nav-visits',
  'Refrigerant log': 'nav-refrigerant-log',
  'Food-safety log': 'nav-food-log',
  Trends: 'nav-trends',
  Customers: 'nav-customers',
  Sites: 'nav-sites',
  Boxes: 'nav-boxes',
  Users: 'nav-users',
  Controllers: 'nav-controllers',
  'Dev mailbox': 'nav-mailbox',
  Import: 'nav-import',
  'Push inbox': 'nav-push-inbox',
};

async function navTestIds(page: Page): Promise<string[]> {
  return page.locator('[data-test="nav"] [data-test^="nav-"]').evaluateAll((els) => els.map((e) => e.getAttribute('data-test') ?? ''));
}

/**
 * Widths for the no-sideways-scroll check. In mobile emulation Chromium widens innerWidth to the content
 * (a 600 px element made innerWidth 600), so `scrollWidth <= innerWidth` alone cannot fail; scrollWidth is
 * also compared with documentElement.clientWidth (the 390 px initial containing block) and innerWidth must stay 390.
 */
async function widths(page: Page): Promise<{ scroll: number; client: number; inner: number }> {
  return page.evaluate(() => {
    const g = globalThis as unknown as InPage;
    return { scroll: g.document.documentElement.scrollWidth, client: g.document.documentElement.clientWidth, inner: g.innerWidth };
  });
}

function expectNoSidewaysScroll(w: { scroll: number; client: number; inner: number }): void {
  expect(w.inner).toBe(390);
  expect(w.client).toBe(390);
  expect(w.scroll).toBeLessThanOrEqual(w.inner);
  expect(w.scroll).toBeLessThanOrEqual(w.client);
}

async function bodyFont(page: Page): Promise<{ family: string; loadedRoboto: string[] }> {
  return page.evaluate(async () => {
    const g = globalThis as unknown as InPage;
    await g.document.fonts.ready;
    const loadedRoboto: string[] = [];
    g.document.fonts.forEach((f) => {
      if (f.family.replace(/["']/g, '') === 'Roboto' && f.status === 'loaded') loadedRoboto.push(f.weight);
    });
    return { family: g.getComputedStyle(g.document.body).fontFamily, loadedRoboto };
  });
}

const viewports = [
  { label: 'desktop', opts: DESKTOP, phone: false },
  { label: 'phone', opts: PHONE, phone: true },
] as const;

describe.each(viewports)('app shell at $label', ({ label, opts, phone }) => {
  it.each(['admin', 'technician', 'manager'] as const)('%s: signs in, sees the nav for the role, and signs out', async (role) => {
    const { context, page, pageErrors } = await newPage(browser, srv.url, opts);
    try {
      await signInUi(page, accounts[role].email, accounts[role].password);
      await expect.poll(() => page.locator('[data-test="nav"]').isVisible()).toBe(true);
      await page.locator('[data-test="live-status"]').waitFor();

      if (!phone) {
        // Wide screens: every item the role may reach is in the side nav; the admin's mailbox item arrives after a probe.
        const expected = [...PRIMARY, ...SECONDARY[role].map((l) => SECONDARY_TEST_IDS[l])];
        await expect.poll(() => navTestIds(page), { timeout: 5_000 }).toEqual(expected);
      } else {
        // Phones: the three field items in the bottom bar, the rest behind "More" (no "More" for a manager).
        const expectedBar = [...PRIMARY, ...(SECONDARY[role].length ? ['nav-more'] : [])];
        await expect.poll(() => navTestIds(page), { timeout: 5_000 }).toEqual(expectedBar);
        if (SECONDARY[role].length) {
          await expect.poll(async () => {
            await page.locator('[data-test="nav-more"]').click();
            const links = page.locator('nav[aria-label="More"] a');
            await links.first().waitFor();
            const texts = (await links.allInnerTexts()).map((t) => t.trim());
            await page.keyboard.press('Escape');
            await page.locator('nav[aria-label="More"]').waitFor({ state: 'detached' });
            return texts;
          }, { timeout: 8_000 }).toEqual(SECONDARY[role]);
        }
      }
      const visibleLabels = await page.locator('[data-test="nav"]').innerText();
      if (role !== 'admin') {
        expect(visibleLabels).not.toContain('Users');
        expect(visibleLabels).not.toContain('Controllers');
        expect(await page.locator('[data-test="nav-users"], [data-test="nav-controllers"]').count()).toBe(0);
      }

      // Body text is set in the bundled Roboto, and the font file really loaded.
      const font = await bodyFont(page);
      expect((font.family.split(',')[0] ?? '').trim().replace(/["']/g, '')).toBe('Roboto');
      expect(font.loadedRoboto).toContain('400');

      // Every role sees the box of the test customer on the fleet page.
      await page.locator('[data-test="box-card"]').first().waitFor();
      if (role === 'admin') await page.screenshot({ path: resultsPath(`shell-${label}-admin.png`) });

      if (phone) {
        expectNoSidewaysScroll(await widths(page));
        // The check notices a page that is too wide (so it can fail): a 600 px element in the content.
        await page.addStyleTag({ content: 'main.content::after { content: ""; display: block; width: 600px; height: 1px; }' });
        const wide = await widths(page);
        expect(wide.scroll).toBeGreaterThan(wide.client);
        expect(() => expectNoSidewaysScroll(wide)).toThrow();
        await page.addStyleTag({ content: 'main.content::after { display: none; }' });
        expectNoSidewaysScroll(await widths(page));
      }

      // Signing out returns to the sign-in page, and the app is closed again.
      await page.locator('[data-test="user-menu"]').click();
      await page.locator('[data-test="sign-out"]').click();
      await page.waitForURL((u) => u.pathname === '/sign-in');
      await page.locator('[data-test="sign-in"]').waitFor();
      expect(await page.locator('[data-test="app-shell"]').count()).toBe(0);
      await page.goto('/');
      await page.waitForURL((u) => u.pathname === '/sign-in');
      await page.locator('[data-test="sign-in"]').waitFor();
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });
});

describe('sign-in page', () => {
  it('a wrong password shows an error and stays on the sign-in page', async () => {
    const { context, page, pageErrors } = await newPage(browser, srv.url, PHONE);
    try {
      await submitSignIn(page, accounts.manager.email, 'not the password at all');
      const alert = page.locator('[data-test="sign-in-problem"]');
      await alert.waitFor({ state: 'visible' });
      expect((await alert.innerText()).trim()).toBe(problems401Detail);
      expect(new URL(page.url()).pathname).toBe('/sign-in');
      expect(await page.locator('[data-test="app-shell"]').count()).toBe(0);
      await page.screenshot({ path: resultsPath('sign-in-wrong-password-phone.png') });
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });
});

describe('polish on a wide screen', () => {
  interface Geo {
    document: {
      documentElement: { scrollHeight: number };
      querySelector(s: string): { getBoundingClientRect(): { top: number; bottom: number } } | null;
    };
    scrollY: number;
    innerHeight: number;
    scrollTo(x: number, y: number): void;
  }
  /** Where the nav column ends and the page ends (document px), and where the nav sits in the viewport, scrolled to the bottom. */
  async function columnAtBottom(page: Page) {
    return page.evaluate(() => {
      const g = globalThis as unknown as Geo;
      g.scrollTo(0, g.document.documentElement.scrollHeight);
      const sider = g.document.querySelector('aside.sider')?.getBoundingClientRect();
      // The sticky part of the column (brand, nav, foot), which scrolls on its own when the nav is long.
      const nav = g.document.querySelector('aside.sider .sider-inner')?.getBoundingClientRect();
      return { siderBottom: (sider?.bottom ?? 0) + g.scrollY, pageBottom: g.document.documentElement.scrollHeight, navTop: nav?.top ?? -1, navBottom: nav?.bottom ?? -1, viewport: g.innerHeight, scrolled: g.scrollY };
    });
  }

  it('the navigation column runs to the bottom of a long page, its nav staying in view', async () => {
    const { context, page, pageErrors } = await newPage(browser, srv.url, DESKTOP);
    try {
      await signInUi(page, accounts.admin.email, accounts.admin.password);
      await page.locator('[data-test="box-card"]').first().waitFor();
      // A page three viewports long.
      await page.addStyleTag({ content: 'main.content::after { content: ""; display: block; height: 2400px; }' });
      const at = await columnAtBottom(page);
      expect(at.scrolled).toBeGreaterThan(1000);
      expect(at.siderBottom).toBeGreaterThanOrEqual(at.pageBottom - 1);
      // Within a pixel: the scroll position may be fractional.
      expect(at.navTop).toBeGreaterThanOrEqual(-1);
      expect(at.navBottom).toBeLessThanOrEqual(at.viewport + 1);
      await page.screenshot({ path: resultsPath('shell-long-page.png'), fullPage: true });
      // The check sees a column that stops short (so it can fail).
      await page.addStyleTag({ content: 'aside.sider { align-self: flex-start !important; }' });
      const short = await columnAtBottom(page);
      expect(short.siderBottom).toBeLessThan(short.pageBottom - 1);
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });

  it("links in a list table are in the theme's colour, not the browser's blue underline, and underline on hover", async () => {
    const { context, page, pageErrors } = await newPage(browser, srv.url, DESKTOP);
    try {
      await signInUi(page, accounts.admin.email, accounts.admin.password);
      await page.locator('[data-test="nav-customers"]').click();
      const link = page.locator('[data-test="list-table"] td a').first();
      await link.waitFor();
      await page.mouse.move(0, 0);
      const style = () => link.evaluate((a) => {
        const s = (globalThis as unknown as { getComputedStyle(e: unknown): { textDecorationLine: string; color: string } }).getComputedStyle(a);
        return { line: s.textDecorationLine, color: s.color };
      });
      const rest = await style();
      expect(rest.line).not.toContain('underline');
      // Chromium's default link blue.
      expect(rest.color).not.toBe('rgb(0, 0, 238)');
      await link.hover();
      expect((await style()).line).toContain('underline');
      expect(pageErrors).toEqual([]);
    } finally {
      await context.close();
    }
  });
});
