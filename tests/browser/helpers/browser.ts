/** Helpers for the browser tests: migrate the test database, launch Chromium, sign in through the UI. */
import { mkdirSync } from 'node:fs';
import path from 'node:path';
import { chromium, type Browser, type BrowserContext, type BrowserContextOptions, type Page } from 'playwright-core';
import { expect } from 'vitest';
import { loadConfig, PROJECT_ROOT } from '../../../server/config';
import { createSequelize } from '../../../server/db/sequelize';
import { migrateUp } from '../../../server/db/migrate';

/** Runs the (idempotent) migrations on the test database npm test provides. */
export async function migrateTestDb(): Promise<void> {
  const sequelize = createSequelize(loadConfig());
  try {
    await migrateUp(sequelize);
  } finally {
    await sequelize.close();
  }
}

/** Launches headless Chromium (Debian's by default, CHROMIUM_PATH to override). */
export function launchChromium(): Promise<Browser> {
  return chromium.launch({
    executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
    args: ['--no-sandbox', '--headless', '--disable-gpu', '--disable-background-networking', '--disable-dev-shm-usage', '--disable-component-update', '--no-first-run'],
  });
}

export const DESKTOP: BrowserContextOptions = { viewport: { width: 1280, height: 800 } };
export const PHONE: BrowserContextOptions = { viewport: { width: 390, height: 844 }, isMobile: true, hasTouch: true, deviceScaleFactor: 2 };

/** A fresh context on the test server; uncaught page errors are collected in pageErrors. */
export async function newPage(browser: Browser, baseURL: string, opts: BrowserContextOptions): Promise<{ context: BrowserContext; page: Page; pageErrors: string[] }> {
  const context = await browser.newContext({ ...opts, baseURL });
  const page = await context.newPage();
  const pageErrors: string[] = [];
  page.on('pageerror', (e) => pageErrors.push(`pageerror: ${e.message}`));
  return { context, page, pageErrors };
}

/** Fills the sign-in form and presses the button (does not wait for the outcome). */
export async function submitSignIn(page: Page, email: string, password: string): Promise<void> {
  await page.goto('/sign-in');
  await page.locator('input[name="email"]').fill(email);
  await page.locator('input[name="password"]').fill(password);
  await page.locator('[data-test="sign-in"]').click();
}

/** Signs in through the UI and waits for the app shell. */
export async function signInUi(page: Page, email: string, password: string): Promise<void> {
  await submitSignIn(page, email, password);
  await page.locator('[data-test="app-shell"]').waitFor({ state: 'visible', timeout: 15_000 });
  expect(new URL(page.url()).pathname).not.toBe('/sign-in');
}

/** test-results/ in the project (git-ignored). */
export function resultsPath(file: string): string {
  const dir = path.join(PROJECT_ROOT, 'test-results');
  mkdirSync(dir, { recursive: true });
  return path.join(dir, file);
}

/** The number in a text such as "38.7 °F" (NaN when there is none). */
export function numberIn(text: string | null): number {
  const m = /-?\d+(?:\.\d+)?/.exec((text ?? '').replace('−', '-'));
  return m ? Number(m[0]) : Number.NaN;
}

/**
 * The few browser globals the tests read inside the page. tsconfig.node.json has no DOM lib (shared/ and
 * server/ must not use browser APIs), so code passed to page.evaluate casts globalThis to this shape.
 */
export interface InPage {
  innerWidth: number;
  document: {
    documentElement: { scrollWidth: number; clientWidth: number };
    body: object;
    fonts: { ready: Promise<unknown>; forEach(cb: (face: { family: string; status: string; weight: string }) => void): void };
  };
  getComputedStyle(el: object): { fontFamily: string };
  /** Set by a test to prove the page was not reloaded. */
  rimeholdNoReloadMarker?: string;
}
