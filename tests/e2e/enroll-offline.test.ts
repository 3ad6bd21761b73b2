// Enrollment without signal: the phone keeps the enrollment (label, site, wiring figures, photo) and sends
// it when the connection returns, once. Playwright's context.setOffline makes every request of the page
// fail as a lost connection would and fires the window's offline/online events.
import { PNG } from 'pngjs';
import type { Page } from 'playwright-core';
import type { Agent } from 'supertest';
import { csrf, testPassword } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';
import { Activity } from '../../server/db/models';

const s = browserApp();
let admin: Agent;
let modelId: string;

beforeAll(async () => {
  admin = s.t.agent();
  expect((await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword })).status).toBe(200);
  modelId = (await admin.get('/api/models')).body.rows.find((m: { name: string }) => m.name === 'FL-2 field logger').id;
});

async function register(serial: string) {
  const res = await admin.post('/api/loggers').set(csrf).send({ serial, modelId, board: 'B', channel: 'stable' });
  expect(res.status).toBe(201);
  return { id: res.body.id as string, serial, token: res.body.token as string };
}

async function openAsTomasz(viewport: { width: number; height: number }) {
  const context = await s.browser.newContext({ viewport });
  const page = await context.newPage();
  page.setDefaultTimeout(60_000);
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  await signIn(page, s.base, 'tomasz@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  return { context, page, errors };
}

/** Opens the label's link (looked up while there is signal), then fills the install as on the roof. */
async function fillInstall(page: Page, token: string, site: string) {
  await page.goto(`${s.base}/enroll?t=${token}`);
  await page.getByTestId('enroll-logger').waitFor();
  await page.getByRole('radio', { name: site }).waitFor();
  await page.context().setOffline(true);
  // The site list searched without signal is the phone's copy.
  await page.getByTestId('site-search').fill('Village');
  await page.getByText('No connection: the sites saved on this phone').waitFor();
  await page.getByRole('radio', { name: site }).click();
  await page.getByTestId('panel-wp').fill('250');
  await page.getByTestId('panel-voc').fill('22.5');
  await page.getByTestId('shunt').fill('2');
  await page.getByTestId('max-current').fill('20');
  const photo = new PNG({ width: 64, height: 48 });
  photo.data.fill(180);
  const chooser = page.waitForEvent('filechooser');
  await page.getByTestId('add-photo').click();
  await (await chooser).setFiles({ name: 'install.png', mimeType: 'image/png', buffer: PNG.sync.write(photo) });
  await page.getByRole('button', { name: 'Remove photo' }).waitFor();
}

test('when the phone has no connection at Enroll, then it is saved on the phone and sent once when back online', async () => {
  const logger = await register('FL2-OFF01');
  const { context, page, errors } = await openAsTomasz(viewports.phone);
  await fillInstall(page, logger.token, 'Aldmere Village Hall');
  await page.getByTestId('enroll-submit').click();
  await page.getByText('Saved on this phone — will send when back online').waitFor();
  await page.getByText('with its wiring figures and the install photo', { exact: false }).waitFor();
  await screenshot(page, 'enroll-saved-offline-phone');
  expect((await admin.get(`/api/loggers/${logger.id}`)).body.status).toBe('registered');

  await context.setOffline(false);
  await page.getByText(`${logger.serial} enrolled at Aldmere Village Hall; it turns online at its first check-in.`).waitFor();
  const res = await admin.get(`/api/loggers/${logger.id}`);
  expect(res.body).toMatchObject({ status: 'enrolled', site: { name: 'Aldmere Village Hall' }, enrolledBy: { name: 'Tomasz' } });
  // Power-monitor data sheet SBOS547 Table 1 (docs/SOURCES.md §8): 2 mΩ at a 1 mA LSB gives CAL 2560.
  expect(res.body.profile).toMatchObject({ version: 1, calibration: 2560 });
  expect(await Activity.count({ where: { action: 'logger.enrolled', targetId: logger.id } })).toBe(1);
  // The photo follows the enrollment; once it is stored the phone keeps nothing.
  await page.getByText('Sent when the connection returned.', { exact: true }).waitFor();
  expect((await admin.get(`/api/loggers/${logger.id}`)).body.install.photo).toBe(true);
  await page.getByTestId('enroll-another').click();
  await page.getByTestId('enroll-code').waitFor();
  expect(await page.getByTestId('enroll-queue').count()).toBe(0);
  expect(errors).toEqual([]);
  await context.close();
});

test('when a saved enrollment is refused once sent (its label was issued again), then the reason is shown and it can be discarded', async () => {
  const logger = await register('FL2-OFF02');
  const { context, page, errors } = await openAsTomasz(viewports.wide);
  await fillInstall(page, logger.token, 'Aldmere Village Hall');
  await page.getByTestId('enroll-submit').click();
  await page.getByText('Saved on this phone — will send when back online').waitFor();
  await screenshot(page, 'enroll-saved-offline-wide');
  await page.close();

  // Meanwhile an admin issues a new label for it: the old token no longer names the logger.
  expect((await admin.post(`/api/loggers/${logger.id}/token`).set(csrf)).status).toBe(200);

  // The next time the console opens with signal, it sends what waits on the phone.
  await context.setOffline(false);
  const next = await context.newPage();
  next.setDefaultTimeout(60_000);
  next.on('pageerror', (e) => errors.push(e.message));
  await next.goto(`${s.base}/enroll`);
  const refused = next.getByTestId('queued-refused');
  await refused.getByText('FL2-OFF02 at Aldmere Village Hall').waitFor();
  await refused.getByText('This label is not known', { exact: false }).waitFor();
  await screenshot(next, 'enroll-queued-refused-wide');
  expect((await admin.get(`/api/loggers/${logger.id}`)).body.status).toBe('registered');
  expect(await Activity.count({ where: { action: 'logger.enrolled', targetId: logger.id } })).toBe(0);

  await refused.getByRole('button', { name: 'Discard' }).click();
  await refused.waitFor({ state: 'detached' });
  await next.reload();
  await next.getByTestId('enroll-code').waitFor();
  expect(await next.getByTestId('enroll-queue').count()).toBe(0);
  expect(errors).toEqual([]);
  await context.close();
});
