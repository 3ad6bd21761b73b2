// The first-readings check and the commissioning sheet in the browser: two loggers are enrolled and send their
// first check-ins through the device API (one with its shunt reversed); the integrator sees each verdict on the
// logger's page, opens the sheet and prints it: the print media shows the sheet alone, on one A4 page, with the
// figures. One browser, one sign-in; the same page is resized for the phone and the wide screenshots.
import type { BrowserContext, Page } from 'playwright-core';
import { PNG } from 'pngjs';
import type { Agent } from 'supertest';
import { csrf, testPassword } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';

const session = browserApp({ seed: 'demo' });
const SITE = 'Aldmere Village Hall';
let context: BrowserContext;
let page: Page;
const errors: string[] = [];
let passed: { id: string; serial: string };
let failed: { id: string; serial: string };

// Power-monitor data sheet SBOS547, Table 1 (docs/SOURCES.md §8 [S]): 2 mΩ shunt, 1 mA current step (32.768 A / 2^15),
// CAL = 2560, power step 25 mW; bus 11.98 V, current 10 A, power 119.8 W. Probe +25.0625 °C (temperature-probe data
// sheet Table 1, §9 [S]). Panel 22.0 V with β −0.30 %/°C at a site whose lowest temperature is −15 °C:
// Voc,max = 22.0 × (1 + 0.003 × 40) = 24.64 V (docs/SOURCES.md §14 [D]).
const install = { panelWp: 400, panelVocV: 22.0, vocTempCoeffPctPerC: -0.3, shuntOhm: 0.002, maxCurrentA: 32.768, tempResolutionBits: 12 };
const good = { bus_v: 11.98, current_a: 10, power_w: 119.8, energy_wh: 3.2, temp_c: 25.0625 };

async function agentFor(name: string): Promise<Agent> {
  const agent = session.t.agent();
  const res = await agent.post('/api/auth/sign-in').send({ email: `${name}@fernhollow.example`, password: testPassword });
  expect(res.status).toBe(200);
  return agent;
}

async function enrolledWith(serial: string, readings: Record<string, number>[], photo: boolean) {
  const morgan = await agentFor('morgan');
  const tomasz = await agentFor('tomasz');
  const models = await morgan.get('/api/models');
  const modelId = models.body.rows.find((m: { name: string }) => m.name === 'FL-2 field logger').id;
  const reg = await morgan.post('/api/loggers').set(csrf).send({ serial, modelId, board: 'B' });
  expect(reg.status).toBe(201);
  const sites = await tomasz.get('/api/sites');
  const siteId = sites.body.rows.find((s: { name: string }) => s.name === SITE).id;
  expect((await tomasz.post('/api/enrollments').set(csrf).send({ ...install, token: reg.body.token, siteId })).status).toBe(201);
  if (photo) {
    // A small install photo made with pngjs: a sky band over a panel-coloured block.
    const png = new PNG({ width: 160, height: 100 });
    for (let i = 0; i < png.width * png.height; i++) png.data.set(i < png.width * 40 ? [170, 200, 230, 255] : [40, 60, 90, 255], i * 4);
    expect((await tomasz.post(`/api/loggers/${reg.body.id}/photo`).set(csrf).attach('photo', PNG.sync.write(png), 'install.png')).status).toBe(204);
  }
  const checkIn = (body: Record<string, unknown>) =>
    session.t.request().post('/api/device/v1/check-in').set('Authorization', `Bearer ${reg.body.token}`).send({ firmware: '2.1.4', board: 'B', security_counter: 0, ...body }).expect(200);
  await checkIn({}); // first contact: the logger receives its profile
  for (const r of readings) await checkIn({ readings: r, config_version: 1 });
  return { id: reg.body.id as string, serial };
}

beforeAll(async () => {
  const morgan = await agentFor('morgan');
  const sites = await morgan.get('/api/sites');
  const siteId = sites.body.rows.find((s: { name: string }) => s.name === SITE).id;
  expect((await morgan.patch(`/api/sites/${siteId}`).set(csrf).send({ minTempC: -15 })).status).toBe(200);
  passed = await enrolledWith('FL2-CS001', [good, good, good], true);
  failed = await enrolledWith('FL2-CS002', [{ ...good, current_a: -10, power_w: -119.8 }], false);

  context = await session.browser.newContext({ viewport: viewports.phone });
  page = await context.newPage();
  page.setDefaultTimeout(60_000);
  page.on('pageerror', (e) => errors.push(e.message));
  await signIn(page, session.base, 'tomasz@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
});

afterAll(() => context?.close());

test('when a logger\'s shunt was wired the wrong way round, then its page says the check failed, on what, and what to look at', async () => {
  await page.setViewportSize(viewports.phone);
  await page.goto(`${session.base}/loggers/${failed.id}`);
  const card = page.getByTestId('commissioning');
  await card.getByText('Commissioning check failed').waitFor();
  await card.getByText('Current direction', { exact: true }).waitFor();
  await card.getByText('Check-in 1: −10 A — negative: the current flows backwards through the shunt').waitFor();
  await card.getByText('swap the two leads at the shunt', { exact: false }).waitFor();
  await card.getByRole('button', { name: 'Start the check again' }).waitFor();
  await card.scrollIntoViewIfNeeded();
  await screenshot(page, 'commissioning-failed-phone');
  expect(errors).toEqual([]);
});

test('when a logger\'s first readings agree with its wiring, then its page says so and its sheet prints on one A4 page with the figures', async () => {
  await page.setViewportSize(viewports.phone);
  await page.goto(`${session.base}/loggers/${passed.id}`);
  const card = page.getByTestId('commissioning');
  await card.getByText('Commissioning check passed', { exact: true }).waitFor();
  await card.getByText('Commissioning check passed: its first 3 readings agree with its wiring.').waitFor();
  await card.getByRole('link', { name: 'Commissioning sheet' }).click();

  await page.getByRole('heading', { name: 'Commissioning sheet' }).waitFor();
  await page.getByTestId('sheet-verdict').getByText('Commissioning check passed').waitFor();
  const wiring = page.getByTestId('sheet-wiring');
  await wiring.getByText('24.64 V').waitFor(); // Voc,max, §14 [D]
  await page.getByTestId('sheet-profile').getByText('2560').waitFor(); // CAL, SBOS547 Table 1
  await page.getByTestId('sheet-identity').getByText('Tomasz', { exact: false }).waitFor();
  await page.getByTestId('sheet-readings').getByText('11.98 V · 10 A · 119.8 W · 25.0625 °C').first().waitFor();
  await page.getByText('Isolate the array first', { exact: false }).first().waitFor();
  await page.getByRole('img', { name: 'Install photo' }).waitFor();
  await screenshot(page, 'commissioning-sheet-phone');
  await page.setViewportSize(viewports.wide);
  await page.getByTestId('sheet-verdict').waitFor();
  await screenshot(page, 'commissioning-sheet-wide');

  // The print media: the app is hidden, the printed copy alone is shown, with the figures.
  await page.emulateMedia({ media: 'print' });
  const printed = page.getByTestId('printed-sheet');
  await printed.waitFor({ state: 'visible' });
  expect(await page.locator('#root').isVisible()).toBe(false);
  const text = await printed.innerText();
  for (const figure of [passed.serial, SITE, 'FL-2 field logger, board B', '24.64 V', '2560', '1 mA', '25 mW', '119.8 W', 'Commissioning check passed', 'DC-rated fuse', 'work-at-height', 'licensed practice', 'IEC 62446-1']) {
    expect(text).toContain(figure);
  }
  // Enrolled at site time: Europe/London, GMT or BST (docs/SOURCES.md §18).
  expect(text).toMatch(/Enrolled\s+\d{4}-\d{2}-\d{2} \d{2}:\d{2} (GMT|BST)/);
  await printed.locator('img').evaluate((img: HTMLImageElement) => (img.complete ? null : new Promise((r) => img.addEventListener('load', r))));
  await screenshot(page, 'commissioning-sheet-print');
  // One page: Chromium's own PDF of the print media (A4, the sheet's @page rule) has exactly one page object.
  const pdf = (await page.pdf({ preferCSSPageSize: true, printBackground: true })).toString('latin1');
  expect(pdf.match(/\/Type\s*\/Page[^s]/g)).toHaveLength(1);
  await page.emulateMedia({ media: 'screen' });
  expect(errors).toEqual([]);
});
