// Registering a CSV batch at a desk: upload progress, the label sheet, the bench sheet, and line-numbered errors.
import fs from 'node:fs';
import { parse } from 'csv-parse/sync';
import type { Browser, Page } from 'playwright-core';
import type { Agent } from 'supertest';
import { csrf, startTestApp, testPassword, type TestApp } from '../helpers/app';
import { launchChromium, screenshot, signIn, viewports } from '../helpers/browser';

let t: TestApp;
let base: string;
let browser: Browser;
let admin: Agent;

/** DEVICE_API.md: a logger token is "hlt_" then 43 base64url characters. */
const tokenPattern = /^hlt_[A-Za-z0-9_-]{43}$/;
const serials = Array.from({ length: 30 }, (_, i) => `FL2-B${String(i + 1).padStart(4, '0')}`);

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  base = await t.listen();
  browser = await launchChromium();
  admin = t.agent();
  expect((await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword })).status).toBe(200);
});
afterAll(async () => {
  await browser?.close();
  await t?.close();
});

/** The machine running the tests may be busy; waits are generous, the test's own limit still applies. */
const patience = 60_000;
async function open(options: { viewport: { width: number; height: number } }) {
  const page = await browser.newPage(options);
  page.setDefaultTimeout(patience);
  return page;
}

async function openBatchForm(page: Page) {
  await page.goto(`${base}/loggers/register`);
  await page.getByRole('heading', { name: 'Register loggers' }).waitFor();
  await page.getByRole('radio', { name: 'CSV batch' }).click();
}

async function chooseCsv(page: Page, name: string, text: string) {
  const chooser = page.waitForEvent('filechooser');
  await page.getByTestId('choose-csv').click();
  await (await chooser).setFiles({ name, mimeType: 'text/csv', buffer: Buffer.from(text) });
  await page.getByTestId('csv-name').getByText(name, { exact: false }).waitFor();
}

test('when an admin uploads a CSV batch, then progress shows, then the label sheet and the bench sheet with every token', async () => {
  const context = await browser.newContext({ viewport: viewports.wide, acceptDownloads: true });
  const page = await context.newPage();
  page.setDefaultTimeout(patience);
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  await signIn(page, base, 'morgan@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await openBatchForm(page);
  const csv = ['serial,model,board,channel', ...serials.map((s, i) => `${s},FL-2 field logger,${'ABC'[i % 3]},${i % 5 === 0 ? 'early' : 'stable'}`)].join('\n') + '\n';
  await chooseCsv(page, 'bench-batch.csv', csv);

  // A slow uplink (Chrome DevTools Protocol network emulation), so the upload lasts long enough to watch.
  const cdp = await context.newCDPSession(page);
  await cdp.send('Network.enable');
  await cdp.send('Network.emulateNetworkConditions', { offline: false, latency: 50, downloadThroughput: 1_000_000, uploadThroughput: 400 });
  await page.getByTestId('upload-csv').click();
  await page.getByTestId('upload-progress').getByRole('progressbar').waitFor();
  await screenshot(page, 'register-uploading-wide');
  await cdp.send('Network.emulateNetworkConditions', { offline: false, latency: 0, downloadThroughput: -1, uploadThroughput: -1 });

  await page.getByTestId('token-sheet').waitFor();
  await page.getByText('These tokens are shown only now').waitFor();
  // 24 labels per A4 page (common practice for label stock): 30 labels make 2 pages, the first shows 24.
  await page.getByText('30 labels · 2 A4 pages of 24').waitFor();
  expect(await page.getByTestId('label').count()).toBe(24);
  await screenshot(page, 'register-labels-wide');

  const download = page.waitForEvent('download');
  await page.getByTestId('download-bench-sheet').click();
  const file = await (await download).path();
  const text = fs.readFileSync(file, 'utf8');
  // RFC 4180 §2: records end in CRLF; read back with csv-parse, a general-purpose CSV reader.
  expect(text.split('\r\n').length).toBe(serials.length + 2);
  const rows = parse(text, { columns: true }) as { serial: string; token: string; model: string; board: string }[];
  expect(rows.map((r) => r.serial)).toEqual(serials);
  expect(rows.every((r) => tokenPattern.test(r.token) && r.model === 'FL-2 field logger')).toBe(true);
  expect(rows.map((r) => r.board)).toEqual(serials.map((_, i) => 'ABC'[i % 3]));
  // The bench sheet's token is the one the server knows for that serial.
  const lookup = await admin.post('/api/enrollments/lookup').set(csrf).send({ token: rows[7].token });
  expect(lookup.status).toBe(200);
  expect(lookup.body.logger.serial).toBe(serials[7]);

  // The printed sheet: only the A4 pages, every label on them.
  await page.emulateMedia({ media: 'print' });
  expect(await page.locator('#heliodor-print .hp-page').count()).toBe(2);
  expect(await page.locator('#heliodor-print .hp-label').count()).toBe(30);
  await screenshot(page, 'register-print-wide');
  await page.emulateMedia({ media: 'screen' });

  // Leaving asks first, because the tokens cannot be shown again.
  await page.getByRole('link', { name: 'Loggers' }).first().click();
  await page.getByText('Leave the labels?').waitFor();
  await screenshot(page, 'register-leave-confirm-wide');
  await page.getByTestId('confirm').click();
  await page.waitForURL((url) => url.pathname === '/loggers');
  expect((await admin.get('/api/loggers?q=FL2-B00')).body.total).toBe(30);
  expect(errors).toEqual([]);
  await context.close();
});

test('when a CSV has a bad line, then the line number is shown and nothing is registered', async () => {
  const page = await open({ viewport: viewports.phone });
  await signIn(page, base, 'morgan@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await openBatchForm(page);
  const csv = 'serial,model,board\nFL2-X0001,FL-2 field logger,A\nFL2-X0002,FL-2 field logger,Z\nFL2-X0003,FL-2 field logger,B\n';
  await chooseCsv(page, 'bad-board.csv', csv);
  await page.getByTestId('upload-csv').click();
  // Board "Z" is on the file's third line (the header is line 1).
  await page.getByTestId('batch-error').getByText('Line 3', { exact: false }).waitFor();
  await page.getByText('Nothing was stored', { exact: false }).waitFor();
  await screenshot(page, 'register-bad-line-phone');
  const res = await admin.get('/api/loggers?q=FL2-X000');
  expect(res.body.total).toBe(0);
  await page.close();
});

test('when an admin registers one logger and later rotates its token, then each label is shown once and the old token is no longer known', async () => {
  const page = await open({ viewport: viewports.phone });
  await signIn(page, base, 'morgan@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${base}/loggers/register`);
  await page.getByTestId('serial').fill('FL2-R0001');
  await page.getByRole('radio', { name: 'A', exact: true }).click();
  await screenshot(page, 'register-one-phone');
  await page.getByTestId('register-one').click();
  await page.getByTestId('label').getByText('FL2-R0001').waitFor();
  await page.getByTestId('sheet-done').click();
  await page.getByText('Leave the labels?').waitFor();
  await page.getByTestId('confirm').click();
  await page.waitForURL((url) => url.pathname === '/loggers');

  const id = (await admin.get('/api/loggers?q=FL2-R0001')).body.rows[0].id as string;
  await page.goto(`${base}/loggers/${id}`);
  await page.getByRole('heading', { name: 'FL2-R0001' }).waitFor();
  await screenshot(page, 'logger-detail-phone');
  await page.getByTestId('rotate').click();
  await page.getByText('The current label stops working at once', { exact: false }).waitFor();
  await screenshot(page, 'logger-rotate-confirm-phone');
  const rotated = page.waitForResponse((r) => r.url().endsWith(`/api/loggers/${id}/token`) && r.request().method() === 'POST');
  await page.getByTestId('confirm').click();
  const fresh = (await (await rotated).json()) as { token: string };
  await page.getByText('New label for FL2-R0001').waitFor();
  await page.getByTestId('label').waitFor();
  await screenshot(page, 'logger-new-label-phone');
  expect((await admin.post('/api/enrollments/lookup').set(csrf).send({ token: fresh.token })).body.logger.serial).toBe('FL2-R0001');
  await page.close();
});

test('when a token is rotated, then the label it replaced is no longer known', async () => {
  const model = (await admin.get('/api/models')).body.rows[0];
  const created = await admin.post('/api/loggers').set(csrf).send({ serial: 'FL2-R0002', modelId: model.id, board: 'B', channel: 'stable' });
  expect(created.status).toBe(201);
  const page = await open({ viewport: viewports.wide });
  await signIn(page, base, 'morgan@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${base}/loggers/${created.body.id}`);
  await page.getByTestId('rotate').click();
  await page.getByTestId('confirm').click();
  await page.getByText('New label for FL2-R0002').waitFor();
  await screenshot(page, 'logger-new-label-wide');
  const old = await admin.post('/api/enrollments/lookup').set(csrf).send({ token: created.body.token });
  expect(old.status).toBe(404);
  await page.close();
});

describe.each(Object.entries(viewports))('registry screens at %s size', (name, viewport) => {
  test('when people browse sites and models, then each screen shows its list', async () => {
    const page = await open({ viewport });
    await signIn(page, base, 'morgan@fernhollow.example', testPassword);
    await page.getByRole('heading', { name: 'Overview' }).waitFor();
    await page.goto(`${base}/sites`);
    await page.getByText('Aldmere Village Hall').first().waitFor();
    await screenshot(page, `sites-${name}`);
    await page.getByTestId('site-card').filter({ hasText: 'Aldmere Village Hall' }).first().click();
    await page.getByRole('heading', { name: 'Loggers here' }).waitFor();
    await screenshot(page, `site-detail-${name}`);
    await page.goto(`${base}/models`);
    await page.getByText('FL-2 field logger').first().waitFor();
    await screenshot(page, `models-${name}`);
    await page.close();
  });
});
