// Support's fleet journey in the browser: on a phone (cards, the filter panel), filter the fleet to
// low-supply loggers of one customer with the screen's own controls, check the URL carries the filter
// and the rows are the API's answer to the same query, export that filter as CSV, then open the lagging
// sites, open one, and read a logger's reason in plain words. Expected values come from the API at run
// time (the demo seed decides the fleet); CSV rows are counted with csv-parse (an RFC 4180 reader). At
// a desk (the table's wide layout), the overview, versions, a live release and a logger's timeline.
import fs from 'node:fs';
import { parse } from 'csv-parse/sync';
import type { Browser, Page } from 'playwright-core';
import { startTestApp, testPassword, type TestApp } from '../helpers/app';
import { journeyAt, launchChromium, screenshot, signIn, viewports } from '../helpers/browser';
import type { ReleaseView } from '../../schemas/releases';

type FleetRow = { id: string; serial: string; customer: string | null; flags: string[] };
type LaggingSite = { siteId: string; siteName: string; customer: string; loggers: { serial: string; reasonLabel: string }[] };

let t: TestApp;
let base: string;
let browser: Browser;
let support: ReturnType<TestApp['agent']>;

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo', seedSize: 'full' });
  base = await t.listen();
  browser = await launchChromium();
  support = t.agent();
  expect((await support.post('/api/auth/sign-in').send({ email: 'lena@fernhollow.example', password: testPassword })).status).toBe(200);
});

afterAll(async () => {
  await browser?.close();
  await t?.close();
});

async function apiList<T>(path: string): Promise<{ rows: T[]; total: number }> {
  const res = await support.get(path);
  expect(res.status).toBe(200);
  return res.body;
}

/** The serials the page shows (table rows on wide screens, cards on phones), in order. */
async function shownSerials(page: Page, wide: boolean): Promise<string[]> {
  const labels = await page.getByTestId(wide ? 'fleet-row' : 'fleet-card').evaluateAll((els) => els.map((e) => e.getAttribute('data-serial') ?? ''));
  return labels;
}

/** Waits (up to 10 s) for the shown serials to settle on the expected list, then compares them. */
async function expectSerials(page: Page, wide: boolean, expected: string[]) {
  let shown: string[] = [];
  for (let i = 0; i < 50; i++) {
    shown = await shownSerials(page, wide);
    if (JSON.stringify(shown) === JSON.stringify(expected)) break;
    await page.waitForTimeout(200);
  }
  expect(shown).toEqual(expected);
}

async function open(page: Page, label: string, phone: boolean) {
  if (phone) {
    const tab = page.getByRole('tab', { name: label });
    if (await tab.count()) {
      await tab.click();
      return;
    }
    await page.getByRole('tab', { name: 'More' }).click();
    await page.getByRole('heading', { name: 'More' }).waitFor();
    await page.getByText(label, { exact: true }).first().click();
    return;
  }
  await page.getByRole('navigation', { name: 'Main' }).getByText(label, { exact: true }).click();
}

describe.each(Object.entries(viewports))('fleet views at %s size', (size, viewport) => {
  const wide = size === 'wide';

  journeyAt(size, 'phone')('when support filters the fleet to one customer’s low-supply loggers, exports them and opens a lagging site, then the URL, rows, CSV and reason match the API', async () => {
    // The customer with low-supply loggers, and the API's answer for the filter the UI will build.
    const lowSupply = await apiList<FleetRow>('/api/loggers?flag=low_supply&pageSize=100');
    const customer = lowSupply.rows.find((r) => r.customer)?.customer;
    expect(customer).toBeTruthy();
    const expected = await apiList<FleetRow>(`/api/loggers?flag=low_supply&q=${encodeURIComponent(customer!)}&pageSize=25`);
    expect(expected.total).toBeGreaterThan(0);
    expect(expected.rows.every((r) => r.flags.includes('low_supply'))).toBe(true);

    const context = await browser.newContext({ viewport, acceptDownloads: true });
    const page = await context.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await signIn(page, base, 'lena@fernhollow.example', testPassword);
    await page.getByRole('heading', { name: 'Overview' }).waitFor();

    await open(page, 'Loggers', !wide);
    await page.getByRole('heading', { name: 'Loggers' }).waitFor();
    await page.getByTestId(wide ? 'fleet-row' : 'fleet-card').first().waitFor();
    await screenshot(page, `fleet-all-${size}`);

    await page.getByTestId('logger-search').fill(customer!);
    await page.waitForURL((u) => u.searchParams.get('q') === customer);
    if (!wide) await page.getByTestId('toggle-filters').click();
    await page.getByTestId('filter-flag').selectOption('low_supply');
    await page.waitForURL((u) => u.searchParams.get('flag') === 'low_supply' && u.searchParams.get('q') === customer);
    await page.getByText(`${expected.total} ${expected.total === 1 ? 'logger' : 'loggers'} match`).waitFor();
    await expectSerials(page, wide, expected.rows.map((r) => r.serial));
    await screenshot(page, `fleet-low-supply-${size}`);

    // A link reproduces the view: the same URL opened afresh shows the same rows.
    const link = page.url();
    const again = await context.newPage();
    await again.goto(link);
    await again.getByText(`${expected.total} ${expected.total === 1 ? 'logger' : 'loggers'} match`).waitFor();
    await expectSerials(again, wide, expected.rows.map((r) => r.serial));
    await again.close();

    // CSV of the whole filter: the export's header, and one record per matching logger.
    const [download] = await Promise.all([page.waitForEvent('download'), page.getByTestId('fleet-export').click()]);
    const csv = fs.readFileSync((await download.path())!, 'utf8');
    const records: string[][] = parse(csv);
    const reference = await support.get(`/api/loggers/export.csv?flag=low_supply&q=${encodeURIComponent(customer!)}`);
    expect(reference.status).toBe(200);
    expect(records[0]).toEqual((parse(reference.text) as string[][])[0]);
    expect(records[0]).toContain('serial');
    expect(records.length - 1).toBe(expected.total);
    const serialAt = records[0].indexOf('serial');
    expect(records.slice(1, 1 + expected.rows.length).map((r) => r[serialAt])).toEqual(expected.rows.map((r) => r.serial));

    // Lagging sites: the API's first site, opened from the list, with its first logger's reason in words.
    const lagging = await apiList<LaggingSite>('/api/fleet/lagging-sites');
    expect(lagging.total).toBeGreaterThan(0);
    const site = lagging.rows[0];
    await open(page, 'Lagging sites', !wide);
    await page.getByRole('heading', { name: 'Lagging sites' }).waitFor();
    await page.getByText(`${lagging.total} ${lagging.total === 1 ? 'site' : 'sites'} lagging`).waitFor();
    await screenshot(page, `lagging-sites-${size}`);

    const [laggingCsv] = await Promise.all([page.waitForEvent('download'), page.getByTestId('lagging-export').click()]);
    const laggingRecords: string[][] = parse(fs.readFileSync((await laggingCsv.path())!, 'utf8'));
    const laggingReference: string[][] = parse((await support.get('/api/fleet/lagging-sites/export.csv')).text);
    expect(laggingRecords[0]).toEqual(laggingReference[0]);
    expect(laggingRecords.length).toBe(laggingReference.length);

    await page.getByTestId(wide ? 'lagging-row' : 'lagging-card').filter({ hasText: site.siteName }).first().click();
    await page.getByRole('heading', { name: site.siteName }).waitFor();
    const first = site.loggers[0];
    await page.getByText(first.serial, { exact: true }).first().waitFor();
    await page.getByText(first.reasonLabel, { exact: false }).first().waitFor();
    await screenshot(page, `lagging-site-${size}`);

    expect(errors).toEqual([]);
    await context.close();
  });

  journeyAt(size, 'wide')('when support opens the overview, versions, a live release and a low-supply logger, then each shows the API’s figures and a note joins the timeline', async () => {
    const overview = (await support.get('/api/overview')).body as { fleet: { laggingSites: { count: number } } };
    const releases = await apiList<{ id: string; version: string; state: string }>('/api/releases');
    const live = releases.rows.find((r) => r.state === 'widening') ?? releases.rows.find((r) => r.state === 'pilot');
    expect(live).toBeDefined();
    const release = (await support.get(`/api/releases/${live!.id}`)).body as ReleaseView;
    const logger = (await apiList<FleetRow>('/api/loggers?flag=low_supply&pageSize=25')).rows[0];
    const why = (await support.get(`/api/loggers/${logger.id}/why`)).body as { verdicts: { outcome: string; label: string }[] };

    const context = await browser.newContext({ viewport });
    const page = await context.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await signIn(page, base, 'lena@fernhollow.example', testPassword);
    await page.getByRole('heading', { name: 'Fleet health' }).waitFor();
    await page.getByTestId('overview-lagging').filter({ hasText: `Lagging sites · ${overview.fleet.laggingSites.count}` }).waitFor();
    await screenshot(page, `overview-${size}`);

    await page.goto(`${base}/fleet/versions`);
    await page.getByRole('heading', { name: 'Versions' }).waitFor();
    await page.getByTestId('model-versions').first().waitFor();
    await screenshot(page, `versions-${size}`);
    await page.getByText('Versions on each board').first().scrollIntoViewIfNeeded();
    await page.getByRole('img', { name: /versions on each board/ }).first().waitFor();
    await screenshot(page, `versions-chart-${size}`);
    await page.getByText('Adoption over time', { exact: false }).first().scrollIntoViewIfNeeded();
    await screenshot(page, `versions-adoption-${size}`);

    // The trip rule's ratio (DEVICE_API.md): failed over finished installs, shown beside the threshold;
    // failures the logger retries by itself (connection, low supply) count on neither side.
    const counted = release.counts.failed - release.counts.failedByReason.connection - release.counts.failedByReason.low_supply;
    const finished = release.counts.installed + counted;
    const ratio = finished ? counted / finished : 0;
    const words = (x: number) => `${Number((x * 100).toFixed(1))} %`;
    await page.goto(`${base}/releases/${live!.id}`);
    await page.getByTestId('failure-ratio').waitFor();
    expect(await page.getByTestId('failure-ratio').innerText()).toBe(`Failure ratio ${words(ratio)} of ${words(Number(release.tripFailureRatio))}`);
    await page.getByTestId('adoption').scrollIntoViewIfNeeded();
    await screenshot(page, `release-dashboard-${size}`);

    await page.goto(`${base}/loggers/${logger.id}`);
    await page.getByRole('heading', { name: 'Why no update?' }).waitFor();
    const refused = why.verdicts.find((v) => v.outcome === 'not_offered');
    if (refused) await page.getByText(refused.label, { exact: true }).first().waitFor();
    const text = `Phoned the site about ${logger.serial} (${size}): the battery is being replaced this week.`;
    await page.getByTestId('note-text').fill(text);
    await page.getByTestId('note-add').click();
    await page.getByTestId('timeline').getByText(text, { exact: true }).waitFor();
    await screenshot(page, `logger-timeline-${size}`);

    expect(errors).toEqual([]);
    await context.close();
  });
});
