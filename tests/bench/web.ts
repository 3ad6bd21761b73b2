// `npm run bench:web`: how the console reaches a phone on a weak link. Debian's Chromium (playwright-core,
// as tests/e2e launch it) at 390×844 with the CPU slowed 4× (CDP Emulation.setCPUThrottlingRate) and the
// network held to 1.6 Mbit/s down, 0.75 Mbit/s up and 150 ms latency (CDP Network.emulateNetworkConditions;
// the mobile profile of common web-performance audits, from memory), against Heliodor started in-process on
// a fresh throwaway database seeded with the small demo. It prints, beside the goals:
//
//   - JavaScript bytes transferred (as sent on the wire, compressed or not) until sign-in is usable,
//   - sign-in usable: from navigation to the e-mail field, password field and sign-in button on screen,
//     on a cold visit (new browser profile) and on a repeat visit (same profile, signed out),
//   - the fleet table's first row: from pressing "Sign in" (with ?next=/loggers) to the first logger shown.
//
// Each figure is the median of --runs runs (default 3). Timing never fails anything: this is a script to
// read, not a test. The web app is built first when stale (scripts/lib/bootstrap.js ensureWebBuild).
//
//   npm run bench:web
//   npm run bench:web -- --runs 5
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Server } from 'node:http';
import { parseArgs } from 'node:util';
import type { BrowserContext, CDPSession, Page } from 'playwright-core';
import { createApp } from '../../server/app';
import { createMailer } from '../../server/mail/mailer';
import { seedDemo } from '../../server/db/seed/demo';
import { stopPasswordWorkers } from '../../server/auth/passwords';
import { appConfig } from '../helpers/config';
import { launchChromium } from '../helpers/browser';
import { freePort, startBenchDatabase } from './database';

const bootstrap = require('../../scripts/lib/bootstrap.js') as { ensureWebBuild(): boolean; ensureChromium(): string; root: string };

const { values: args } = parseArgs({ options: { runs: { type: 'string', default: '3' } }, strict: true });
const runs = Number(args.runs);
if (!Number.isInteger(runs) || runs < 1) throw new Error('--runs must be a whole number of at least 1');

const PASSWORD = 'bench: weak link sign-in';
const EMAIL = 'lena@fernhollow.example';
const viewport = { width: 390, height: 844 };
const link = { offline: false, latency: 150, downloadThroughput: (1.6e6 / 8), uploadThroughput: (0.75e6 / 8) };
const goals = { jsKB: 300, coldS: 6, repeatS: 2, fleetS: 4 };

const log = (msg: string) => process.stdout.write(`[bench:web] ${msg}\n`);

/** Throttles one page as the phone on a weak link, and counts the JavaScript bytes it receives. */
async function phonePage(context: BrowserContext): Promise<{ page: Page; cdp: CDPSession; jsBytes: () => number }> {
  const page = await context.newPage();
  const cdp = await context.newCDPSession(page);
  await cdp.send('Network.enable');
  await cdp.send('Network.emulateNetworkConditions', link);
  await cdp.send('Emulation.setCPUThrottlingRate', { rate: 4 });
  const scripts = new Set<string>();
  let bytes = 0;
  cdp.on('Network.responseReceived', (e) => {
    if (e.type === 'Script' || /javascript/.test(e.response.mimeType)) scripts.add(e.requestId);
  });
  cdp.on('Network.loadingFinished', (e) => {
    if (scripts.has(e.requestId)) bytes += e.encodedDataLength;
  });
  return { page, cdp, jsBytes: () => bytes };
}

/** Opens the sign-in screen and waits until a person can use it; returns seconds and JS bytes so far. */
async function openSignIn(page: Page, base: string, jsBytes: () => number) {
  const started = Date.now();
  await page.goto(`${base}/sign-in?next=%2Floggers`, { waitUntil: 'commit', timeout: 120_000 });
  await page.getByTestId('email').waitFor({ state: 'visible', timeout: 120_000 });
  await page.getByTestId('password').waitFor({ state: 'visible', timeout: 120_000 });
  await page.getByTestId('sign-in').waitFor({ state: 'visible', timeout: 120_000 });
  return { seconds: (Date.now() - started) / 1000, jsBytes: jsBytes() };
}

/** Signs in and waits for the fleet table's first row (a card at phone size). */
async function fleetFirstRow(page: Page) {
  await page.getByTestId('email').fill(EMAIL);
  await page.getByTestId('password').fill(PASSWORD);
  const started = Date.now();
  await page.getByTestId('sign-in').click();
  await page.getByTestId('fleet-card').first().waitFor({ state: 'visible', timeout: 120_000 });
  return (Date.now() - started) / 1000;
}

const median = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
};

async function main() {
  bootstrap.ensureChromium();
  if (bootstrap.ensureWebBuild()) log('the web app was stale and has been rebuilt');
  const webDir = path.join(bootstrap.root, 'dist');
  log('starting a throwaway PostgreSQL and seeding the small demo');
  const db = await startBenchDatabase();
  const storeDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-bench-store-'));
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-bench-data-'));
  let server: Server | null = null;
  let app: ReturnType<typeof createApp> | null = null;
  const browser = await launchChromium();
  try {
    await seedDemo(db.sequelize, { password: PASSWORD, dataDir, storeDir, now: new Date(), bcryptCost: 10, size: 'small' });
    app = createApp({
      config: appConfig({ outboxDir: path.join(dataDir, 'outbox'), storeDir, webDir }),
      sequelize: db.sequelize,
      mailer: createMailer({ host: '127.0.0.1', port: await freePort(), secure: false, from: 'Heliodor <heliodor@localhost>' }),
      readiness: { migrated: true, seeded: 'complete' },
    });
    const listening = app;
    server = await new Promise<Server>((resolve) => {
      const s = listening.listen(0, '127.0.0.1', () => resolve(s));
    });
    const base = `http://127.0.0.1:${(server.address() as { port: number }).port}`;

    const results = { js: [] as number[], cold: [] as number[], repeat: [] as number[], repeatJs: [] as number[], fleet: [] as number[] };
    for (let run = 1; run <= runs; run++) {
      const context = await browser.newContext({ viewport, deviceScaleFactor: 1, isMobile: true, hasTouch: true });
      try {
        const first = await phonePage(context);
        const cold = await openSignIn(first.page, base, first.jsBytes);
        const fleet = await fleetFirstRow(first.page);
        // Let a service worker (if the app has one) finish installing, as it would while the person works.
        await first.page.evaluate(async () => {
          if ('serviceWorker' in navigator && navigator.serviceWorker.getRegistration) {
            const reg = await navigator.serviceWorker.getRegistration();
            if (reg) await navigator.serviceWorker.ready;
          }
        });
        await first.page.close();
        // A repeat visit: the same browser profile (its HTTP cache and any service worker), signed out.
        await context.clearCookies();
        const second = await phonePage(context);
        const repeat = await openSignIn(second.page, base, second.jsBytes);
        await second.page.close();
        results.js.push(cold.jsBytes);
        results.cold.push(cold.seconds);
        results.fleet.push(fleet);
        results.repeat.push(repeat.seconds);
        results.repeatJs.push(repeat.jsBytes);
        log(`run ${run}/${runs}: JS ${(cold.jsBytes / 1024).toFixed(0)} KB, sign-in cold ${cold.seconds.toFixed(1)} s, repeat ${repeat.seconds.toFixed(1)} s (JS ${(repeat.jsBytes / 1024).toFixed(0)} KB), fleet first row ${fleet.toFixed(1)} s`);
      } finally {
        await context.close();
      }
    }

    const kb = median(results.js) / 1024;
    const rows: [string, string, string, boolean][] = [
      ['JavaScript before sign-in is usable', `${kb.toFixed(0)} KB`, `≤ ${goals.jsKB} KB`, kb <= goals.jsKB],
      ['sign-in usable, cold', `${median(results.cold).toFixed(1)} s`, `≤ ${goals.coldS} s`, median(results.cold) <= goals.coldS],
      ['sign-in usable, repeat visit', `${median(results.repeat).toFixed(1)} s`, `≤ ${goals.repeatS} s`, median(results.repeat) <= goals.repeatS],
      ['  (JavaScript on the repeat visit)', `${(median(results.repeatJs) / 1024).toFixed(0)} KB`, '', true],
      ['fleet table first row after sign-in', `${median(results.fleet).toFixed(1)} s`, `≤ ${goals.fleetS} s`, median(results.fleet) <= goals.fleetS],
    ];
    const w = Math.max(...rows.map((r) => r[0].length));
    process.stdout.write(`\nPhone 390×844, CPU 4× slower, 1.6 Mbit/s down / 0.75 up, 150 ms; median of ${runs} run(s)\n`);
    process.stdout.write(`${'measure'.padEnd(w)}  ${'result'.padStart(9)}  ${'goal'.padEnd(9)}  met\n`);
    for (const [name, value, goal, met] of rows) {
      process.stdout.write(`${name.padEnd(w)}  ${value.padStart(9)}  ${goal.padEnd(9)}  ${goal ? (met ? 'yes' : 'no') : ''}\n`);
    }
  } finally {
    await browser.close();
    if (server) {
      server.closeAllConnections();
      await new Promise((r) => server!.close(r));
    }
    await app?.stop();
    await db.close();
    await stopPasswordWorkers();
    fs.rmSync(storeDir, { recursive: true, force: true });
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}

main().catch((err) => {
  console.error(err);
  process.exit(1);
});
