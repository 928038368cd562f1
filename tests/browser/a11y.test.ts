/**
 * Accessibility sweep: every screen, at 1366×900 and 390×844, in the light and the dark theme, is checked
 * with axe-core (no serious or critical violations) and saved as a screenshot under test-results/screens/.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browser, BrowserContext, BrowserContextOptions, Page } from 'playwright-core';
import type { MqttClient } from 'mqtt';
import { PROJECT_ROOT } from '../../server/config';
import type { RunningServer } from '../../server/main';
import { factories } from '../server/helpers/app';
import { startTelemetryServer } from '../server/helpers/telemetry';
import { raiseBoxAirAlarm } from './helpers/alarm';
import { PHONE, launchChromium, migrateTestDb, resultsPath, signInUi } from './helpers/browser';

const AXE_PATH = path.join(PROJECT_ROOT, 'node_modules', 'axe-core', 'axe.min.js');
const WIDE: BrowserContextOptions = { viewport: { width: 1366, height: 900 } };
const COMBOS = [
  { size: 'wide', opts: WIDE, theme: 'light' },
  { size: 'wide', opts: WIDE, theme: 'dark' },
  { size: 'phone', opts: PHONE, theme: 'light' },
  { size: 'phone', opts: PHONE, theme: 'dark' },
] as const;

interface Screen {
  name: string;
  path: () => string;
  guest?: boolean;
  /** Shown once the screen's data is in (so the check sees the loaded screen, not a spinner). */
  ready?: string;
}

/** Records pages are being added while this sweep exists: take those the client's route table has (src/router/routes.ts). */
function recordsScreens(): Screen[] {
  const src = readFileSync(path.join(PROJECT_ROOT, 'src', 'router', 'routes.ts'), 'utf8');
  // An optional parameter (`/:boxId(\\d+)?`) is left out; a page that needs an id of its own is skipped.
  const paths = [...src.matchAll(/path:\s*'(records\/[^']+)'/g)].map((m) => (m[1] ?? '').replace(/\/:\w+(\([^)]*\))?\?/g, ''));
  return paths.filter((p) => !p.includes(':')).map((p) => ({ name: p.replaceAll('/', '-'), path: () => `/${p}` }));
}

// A list page has loaded: a table cell (wide), a card (phone) or its empty message (src/components/list/ListPage.vue).
const LIST_READY = '[data-test="list-table"] .n-data-table-td, [data-test="list-cards"] li, [data-test="list-empty"]';

let srv: RunningServer;
let browser: Browser;
let ctl: MqttClient | null = null;
let boxId = 0;
let alarmId = 0;
let admin = { email: '', password: '' };

const SCREENS: Screen[] = [
  { name: 'sign-in', path: () => '/sign-in', guest: true },
  { name: 'set-password', path: () => '/set-password?token=not-a-real-token', guest: true },
  { name: 'fleet', path: () => '/', ready: '[data-test="box-card"]' },
  { name: 'box', path: () => `/boxes/${boxId}`, ready: '[data-test="box-settings-form"]' },
  { name: 'alarms', path: () => '/alarms', ready: '[data-test="alarm-row"]' },
  { name: 'alarm-detail', path: () => `/alarms/${alarmId}`, ready: '[data-test="alarm-state"]' },
  { name: 'pt-calculator', path: () => '/tools/pressure-temperature' },
  { name: 'superheat-calculator', path: () => '/tools/superheat' },
  { name: 'customers', path: () => '/customers', ready: LIST_READY },
  { name: 'sites', path: () => '/sites', ready: LIST_READY },
  { name: 'boxes', path: () => '/boxes', ready: LIST_READY },
  { name: 'import', path: () => '/import' },
  { name: 'users', path: () => '/admin/users', ready: LIST_READY },
  { name: 'controllers', path: () => '/admin/controllers', ready: LIST_READY },
  { name: 'mailbox', path: () => '/admin/mailbox' },
  { name: 'push-inbox', path: () => '/admin/push-inbox' },
  { name: 'not-found', path: () => '/no-such-page' },
  ...recordsScreens(),
];

beforeAll(async () => {
  await migrateTestDb();
  srv = await startTelemetryServer({ SMTP_FAKE: '1', SMTP_PORT: '0' });
  const raised = await raiseBoxAirAlarm(srv);
  ctl = raised.ctl;
  boxId = raised.box.box.id;
  alarmId = raised.alarmId;
  const a = await factories(srv).user('admin');
  admin = { email: a.email, password: a.password };
  browser = await launchChromium();
});

// Every serious or critical violation seen, by screen and combination, for whoever fixes them.
const found: Record<string, string[]> = {};

afterAll(async () => {
  writeFileSync(resultsPath('a11y-violations.json'), JSON.stringify(found, null, 2));
  await ctl?.endAsync();
  await browser?.close();
  await srv?.stop();
});

interface RouterWindow {
  document: { querySelector(sel: string): { __vue_app__?: { config: { globalProperties: { $router?: { push(to: string): Promise<unknown> } } } } } | null };
}
interface AxeNode {
  target: unknown[];
  failureSummary?: string;
}
interface AxeViolation {
  id: string;
  impact: string | null;
  help: string;
  nodes: AxeNode[];
}
interface AxeWindow {
  axe: { run(ctx: unknown, opts: { resultTypes: string[] }): Promise<{ violations: AxeViolation[] }> };
  document: { documentElement: { dataset: Record<string, string | undefined> }; fonts: { ready: Promise<unknown> }; getAnimations(): { playState: string }[] };
}

/** Serious and critical axe violations on the page, one line per rule with the first few elements. */
async function seriousViolations(page: Page): Promise<string[]> {
  if (!(await page.evaluate(() => 'axe' in globalThis))) await page.addScriptTag({ path: AXE_PATH });
  const violations = await page.evaluate(async () => {
    const g = globalThis as unknown as AxeWindow;
    const r = await g.axe.run(g.document, { resultTypes: ['violations'] });
    return r.violations.map((v) => ({ id: v.id, impact: v.impact, help: v.help, nodes: v.nodes.slice(0, 4).map((n) => JSON.stringify(n.target)), why: (v.nodes[0]?.failureSummary ?? '').slice(0, 240) }));
  });
  return violations.filter((v) => v.impact === 'serious' || v.impact === 'critical').map((v) => `${v.impact} ${v.id}: ${v.help} — ${v.nodes.join(' ')} — ${v.why}`);
}

/**
 * Faults axe does not see: a page heading flush against the content edge (the page lost its
 * padding), a link in a table or card that keeps the browser's blue underline while not hovered,
 * and a field showing the UI library's stock placeholder ("Please Input") instead of our words.
 */
async function layoutFaults(page: Page): Promise<string[]> {
  await page.mouse.move(0, 0);
  return page.evaluate(() => {
    const doc = (globalThis as unknown as AxeWindow).document as unknown as {
      querySelector(s: string): { getBoundingClientRect(): { left: number } } | null;
      querySelectorAll(s: string): ArrayLike<{ textContent: string | null; matches(s: string): boolean }>;
    };
    const view = globalThis as unknown as { getComputedStyle(e: unknown): { textDecorationLine: string } };
    const out: string[] = [];
    const main = doc.querySelector('main.content');
    const heading = doc.querySelector('main.content h1, main.content h2');
    if (main && heading && heading.getBoundingClientRect().left - main.getBoundingClientRect().left < 8) out.push('heading flush against the content edge');
    for (const a of Array.from(doc.querySelectorAll('main.content table a, main.content .n-card a, main.content [data-test="list-cards"] a'))) {
      if (a.matches(':focus-visible')) continue;
      if (view.getComputedStyle(a).textDecorationLine.includes('underline')) out.push(`underlined link "${(a.textContent ?? '').trim().slice(0, 40)}"`);
    }
    const stock = Array.from(doc.querySelectorAll('main.content [placeholder^="Please "], main.content .n-base-selection-placeholder'))
      .map((e) => ((e as unknown as { getAttribute(n: string): string | null }).getAttribute('placeholder') ?? e.textContent ?? '').trim())
      .filter((t) => t.startsWith('Please '));
    for (const t of new Set(stock)) out.push(`stock placeholder "${t}"`);
    return out;
  });
}

/** Navigates inside the signed-in app with its own router (no reload: the sweep visits many screens). */
async function routerPush(page: Page, to: string): Promise<void> {
  await page.evaluate(async (target) => {
    const el = (globalThis as unknown as RouterWindow).document.querySelector('#app');
    const router = el?.__vue_app__?.config.globalProperties.$router;
    if (!router) throw new Error('the app router is not reachable');
    await router.push(target);
  }, to);
  await page.waitForURL((u) => `${u.pathname}${u.search}` === to);
}

/** Waits for a screen to finish its first load (content shown, fonts in, transitions over). */
async function settle(page: Page, screen: Screen): Promise<void> {
  await page.locator(screen.guest ? 'form' : 'main.content').first().waitFor({ state: 'visible', timeout: 15_000 });
  if (screen.ready) await page.locator(screen.ready).first().waitFor({ state: 'visible', timeout: 15_000 });
  else await page.waitForLoadState('networkidle', { timeout: 1_500 }).catch(() => undefined);
  // Naive UI fades content in; axe measures colours as painted, so wait for the animations to end.
  await page.waitForFunction(() => (globalThis as unknown as AxeWindow).document.getAnimations().every((a) => a.playState !== 'running'), undefined, { timeout: 3_000 }).catch(() => undefined);
  await page.evaluate(() => (globalThis as unknown as AxeWindow).document.fonts.ready.then(() => undefined));
}

describe.each(COMBOS)('screens at $size size in the $theme theme', ({ size, opts, theme }) => {
  let guestContext: BrowserContext;
  let userContext: BrowserContext;
  let guestPage: Page;
  let userPage: Page;
  const pageErrors: string[] = [];

  beforeAll(async () => {
    const make = async () => {
      // bypassCSP: the app's CSP allows only its own scripts, and axe is injected as an inline script.
      const c = await browser.newContext({ ...opts, baseURL: srv.url, bypassCSP: true, reducedMotion: 'reduce' });
      await c.addInitScript((mode: string) => {
        (globalThis as unknown as { localStorage: { setItem(k: string, v: string): void } }).localStorage.setItem('rimehold.theme', mode);
      }, theme);
      const p = await c.newPage();
      p.on('pageerror', (e) => pageErrors.push(`pageerror: ${e.message}`));
      return { c, p };
    };
    ({ c: guestContext, p: guestPage } = await make());
    ({ c: userContext, p: userPage } = await make());
    await signInUi(userPage, admin.email, admin.password);
  });

  afterAll(async () => {
    await guestContext?.close();
    await userContext?.close();
  });

  it.each(SCREENS)('$name has no serious or critical accessibility violation', async (screen) => {
    pageErrors.length = 0;
    const page = screen.guest ? guestPage : userPage;
    if (screen.guest) await page.goto(screen.path());
    else await routerPush(page, screen.path());
    await settle(page, screen);
    // The theme really is the one under test (src/stores/theme.ts writes it on <html data-theme>).
    expect(await page.evaluate(() => (globalThis as unknown as AxeWindow).document.documentElement.dataset.theme)).toBe(theme);
    if (!screen.guest) expect(new URL(page.url()).pathname).not.toBe('/sign-in');
    await page.screenshot({ path: resultsPath(path.join('screens', `${screen.name}-${size}-${theme}.png`)), fullPage: true });
    const violations = await seriousViolations(page);
    if (violations.length) found[`${screen.name} ${size} ${theme}`] = violations;
    expect(violations).toEqual([]);
    expect(pageErrors).toEqual([]);
    if (!screen.guest) expect(await layoutFaults(page)).toEqual([]);
  });
});
