// Debian's Chromium driven by playwright-core (never a browser download), with screenshots kept
// under tests/e2e/artifacts/ (git-ignored).
import fs from 'node:fs';
import path from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { listeningApp, startTestApp, type TestApp } from './app';

export const viewports = { phone: { width: 390, height: 844 }, wide: { width: 1280, height: 800 } } as const;
/**
 * A journey that runs once, at the size its person would use, inside a describe over both sizes: the
 * accessibility pass (tests/e2e/accessibility.test.ts) opens every screen at both sizes, so a journey
 * need not repeat at the other one.
 */
export const journeyAt = (size: string, at: keyof typeof viewports) => (size === at ? test : ((() => undefined) as unknown as typeof test));
export const artifacts = path.resolve(__dirname, '../e2e/artifacts');

export function launchChromium(extraArgs: string[] = []): Promise<Browser> {
  return chromium.launch({
    executablePath: process.env.HELIODOR_CHROMIUM ?? '/usr/bin/chromium',
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync', ...extraArgs],
  });
}

export async function screenshot(page: Page, name: string) {
  fs.mkdirSync(artifacts, { recursive: true });
  await page.screenshot({ path: path.join(artifacts, `${name}.png`), fullPage: true });
}

/** Signs in through the sign-in screen, as a person would. */
export async function signIn(page: Page, base: string, email: string, password: string) {
  await page.goto(`${base}/sign-in`);
  await page.getByTestId('email').fill(email);
  await page.getByTestId('password').fill(password);
  await page.getByTestId('sign-in').click();
}

/** A listening test app and a Chromium for one browser test file, opened before and closed after its tests. */
export function browserApp(options: Parameters<typeof startTestApp>[0] = { seed: 'demo' }) {
  const app = listeningApp(options);
  const session = {} as { t: TestApp; base: string; browser: Browser };
  beforeAll(async () => {
    session.t = app.t;
    session.base = app.base;
    session.browser = await launchChromium();
  });
  afterAll(() => session.browser?.close());
  return session;
}
