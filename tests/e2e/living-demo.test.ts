// The first hour with Heliodor, in the browser: the full demo scenario seeded fifty minutes ago with no
// server running since (so every logger's last check-in is older than three intervals), then the
// living demo turned on (server/demo/live.ts) while support watches the overview. Its clock runs at
// 30× (the same code path as real time: each 15-minute interval passes in 30 s, and the overview
// refreshes itself every minute), with no injected install failures so the outcome does not hang on
// chance. Then the pictures the README shows: the overview at phone size and the fleet table at wide
// size, at a device scale factor of 1.
//
// Sources: the overview counts a logger online when it checked in within three intervals (its note
// says so); the scenario's 3.0.0-rc.1 pilot has a logger part-way through its download and the
// scenario's spare board steps through 2.1.4 (server/db/seed/fleet-plan.ts, PRODUCT.md "Demo
// scenario"); PNG sizes are read from the file's IHDR chunk by pngjs (PNG specification §11.2.2).
import fs from 'node:fs';
import path from 'node:path';
import { PNG } from 'pngjs';
import type { Page } from 'playwright-core';
import { testPassword } from '../helpers/app';
import { artifacts, browserApp, signIn, viewports } from '../helpers/browser';

jest.setTimeout(240_000);

const session = browserApp({ seed: 'demo', seedSize: 'full', seedAt: new Date(Date.now() - 50 * 60_000) });
const support = 'lena@fernhollow.example';
/** The README's pictures: kept in the repository when HELIODOR_README_SCREENSHOTS=1, else only under artifacts. */
const readmeShots = path.resolve(__dirname, '../../docs/screenshots');

type Watched = { online: number; installed: Record<string, number> };

/** What the overview shows now: the online figure and each live release's installed count. */
function watched(page: Page): Promise<Watched> {
  return page.evaluate(() => {
    const online = document.querySelector('[data-testid="figure-online-value"]')?.textContent ?? '';
    const installed: Record<string, number> = {};
    for (const row of Array.from(document.querySelectorAll('[data-release]'))) {
      const m = /(\d+) installed/.exec((row as HTMLElement).innerText);
      if (m) installed[row.getAttribute('data-release')!] = Number(m[1]);
    }
    return { online: Number(online.replace(/,/g, '')), installed };
  });
}

async function openOverview(page: Page) {
  await signIn(page, session.base, support, testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.getByTestId('figure-online-value').waitFor();
  await page.locator('[data-release]').first().waitFor();
}

/** Takes the viewport's picture as PNG and keeps it where the README (or the test artifacts) want it. */
async function picture(page: Page, name: string): Promise<Buffer> {
  const png = await page.screenshot({ type: 'png' });
  fs.mkdirSync(artifacts, { recursive: true });
  fs.writeFileSync(path.join(artifacts, `${name}.png`), png);
  if (process.env.HELIODOR_README_SCREENSHOTS === '1') {
    fs.mkdirSync(readmeShots, { recursive: true });
    fs.writeFileSync(path.join(readmeShots, `${name}.png`), png);
  }
  return png;
}

describe('the living demo in the browser', () => {
  test('when support watches the overview while the living demo runs, then the online count and a live release\'s installed count change without a reload', async () => {
    const context = await session.browser.newContext({ viewport: viewports.wide });
    const page = await context.newPage();
    await openOverview(page);
    const before = await watched(page);
    // Nobody has checked in for fifty minutes: more than three 15-minute intervals.
    expect(before.online).toBe(0);
    expect(Object.keys(before.installed)).toContain('3.0.0-rc.1 early');

    let loads = 0;
    page.on('load', () => (loads += 1));
    await session.t.startLiveDemo({ speed: 30, failRate: 0 });
    await page.waitForFunction(
      (first: Watched) => {
        const online = Number((document.querySelector('[data-testid="figure-online-value"]')?.textContent ?? '').replace(/,/g, ''));
        const moved = Array.from(document.querySelectorAll('[data-release]')).some((row) => {
          const m = /(\d+) installed/.exec((row as HTMLElement).innerText);
          const was = first.installed[row.getAttribute('data-release')!];
          return m !== null && was !== undefined && Number(m[1]) !== was;
        });
        return online !== first.online && moved;
      },
      before,
      { timeout: 120_000, polling: 1000 },
    );
    const after = await watched(page);
    expect(loads).toBe(0);
    expect(after.online).toBeGreaterThan(before.online);
    const grew = Object.entries(after.installed).filter(([release, n]) => n > before.installed[release]);
    expect(grew.length).toBeGreaterThan(0);
    await context.close();
  });

  test('when the README\'s pictures are taken, then they show the overview at phone size and the fleet table at wide size, each a PNG at scale 1 well under 200 KB', async () => {
    const phone = await session.browser.newContext({ viewport: viewports.phone, deviceScaleFactor: 1 });
    const page = await phone.newPage();
    await openOverview(page);
    const overview = PNG.sync.read(await picture(page, 'overview-phone'));
    expect([overview.width, overview.height]).toEqual([390, 844]);
    await phone.close();

    const wide = await session.browser.newContext({ viewport: viewports.wide, deviceScaleFactor: 1 });
    const table = await wide.newPage();
    await signIn(table, session.base, support, testPassword);
    await table.getByRole('heading', { name: 'Overview' }).waitFor();
    await table.goto(`${session.base}/loggers`);
    await table.getByTestId('fleet-row').first().waitFor();
    const fleet = PNG.sync.read(await picture(table, 'fleet-wide'));
    expect([fleet.width, fleet.height]).toEqual([1280, 800]);
    await wide.close();

    for (const name of ['overview-phone', 'fleet-wide']) {
      expect(fs.statSync(path.join(artifacts, `${name}.png`)).size).toBeLessThan(200 * 1024);
    }
  });
});
