// Enrollment on a phone: Chromium's fake camera shows a logger label, the integrator enrolls the logger.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import QRCode from 'qrcode';
import { PNG } from 'pngjs';
import type { Browser, Page } from 'playwright-core';
import type { Agent } from 'supertest';
import { csrf, startTestApp, testPassword, type TestApp } from '../helpers/app';
import { launchChromium, screenshot, signIn, viewports } from '../helpers/browser';

let t: TestApp;
let base: string;
let admin: Agent;
let modelId: string;
let labelled: { id: string; serial: string; token: string };
let camera: Browser;
let plain: Browser;
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-camera-'));

/**
 * A Y4M clip (the format Chromium's fake capture device reads) showing `png` centred on white:
 * header `YUV4MPEG2 W640 H480 F30:1 Ip A1:1 C420jpeg`, then per frame "FRAME\n", the luma plane and two
 * quarter-size chroma planes of 128 (no colour). Chromium loops the file, so a few frames suffice.
 */
function writeY4m(file: string, png: PNG, frames = 6) {
  const W = 640;
  const H = 480;
  const luma = Buffer.alloc(W * H, 255);
  const left = Math.floor((W - png.width) / 2);
  const top = Math.floor((H - png.height) / 2);
  for (let y = 0; y < png.height; y++) {
    for (let x = 0; x < png.width; x++) luma[(top + y) * W + left + x] = png.data[(y * png.width + x) * 4];
  }
  const chroma = Buffer.alloc((W / 2) * (H / 2), 128);
  const parts: Buffer[] = [Buffer.from(`YUV4MPEG2 W${W} H${H} F30:1 Ip A1:1 C420jpeg\n`)];
  for (let i = 0; i < frames; i++) parts.push(Buffer.from('FRAME\n'), luma, chroma, chroma);
  fs.writeFileSync(file, Buffer.concat(parts));
}

async function register(serial: string, board = 'B') {
  const res = await admin.post('/api/loggers').set(csrf).send({ serial, modelId, board, channel: 'stable' });
  expect(res.status).toBe(201);
  return { id: res.body.id as string, serial, token: res.body.token as string };
}

async function newPhonePage(browser: Browser): Promise<Page> {
  const context = await browser.newContext({ viewport: viewports.phone });
  await context.grantPermissions(['camera'], { origin: base });
  const page = await context.newPage();
  // The machine running the tests may be busy; waits are generous, the test's own limit still applies.
  page.setDefaultTimeout(60_000);
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  (page as Page & { errors?: string[] }).errors = errors;
  return page;
}

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  base = await t.listen();
  admin = t.agent();
  expect((await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword })).status).toBe(200);
  const models = await admin.get('/api/models');
  modelId = models.body.rows.find((m: { name: string }) => m.name === 'FL-2 field logger').id;
  labelled = await register('FL2-E2E01');

  // The label as the logger carries it: the enrollment link, error correction Q, 6 px per module.
  const png = PNG.sync.read(await QRCode.toBuffer(`${base}/enroll?t=${labelled.token}`, { errorCorrectionLevel: 'Q', scale: 6, margin: 4 }));
  const clip = path.join(tmp, 'label.y4m');
  writeY4m(clip, png);
  const fakeCamera = ['--use-fake-ui-for-media-stream', '--use-fake-device-for-media-stream'];
  camera = await launchChromium([...fakeCamera, `--use-file-for-fake-video-capture=${clip}`]);
  // Chromium's own fake picture (no QR code) for the tests that must not read the label.
  plain = await launchChromium(fakeCamera);
});

afterAll(async () => {
  await camera?.close();
  await plain?.close();
  await t?.close();
  fs.rmSync(tmp, { recursive: true, force: true });
});

test('when the camera sees a logger label, then the integrator enrolls it at a site with the computed calibration', async () => {
  const page = await newPhonePage(camera);
  await signIn(page, base, 'tomasz@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.getByRole('tab', { name: 'Enroll' }).click();
  await page.getByRole('heading', { name: 'Enroll a logger' }).waitFor();
  await page.getByTestId('scanner').waitFor();

  // The camera reads the label and the lookup shows the logger.
  await page.getByTestId('enroll-logger').getByText(labelled.serial).waitFor();
  await page.getByText('FL-2 field logger · board B').waitFor();
  await screenshot(page, 'enroll-found-phone');

  await page.getByRole('radio', { name: 'Aldmere Village Hall' }).click();
  await page.getByTestId('panel-wp').fill('250');
  await page.getByTestId('panel-voc').fill('22.5');
  await page.getByTestId('shunt').fill('2'); // mΩ, the default unit
  await page.getByTestId('max-current').fill('20');
  // INA226 data sheet, Table 1 (worked example): R_SHUNT = 2 mΩ at 1 mA/bit gives CAL = 2560. 20 A needs at
  // least 20 / 2^15 = 610 µA/bit, rounded up to 1 mA/bit; 20 A × 2 mΩ = 40 mV (Ohm's law) of the 81.92 mV full scale.
  await page.getByTestId('calibration-details').click(); // register values sit behind Details
  await expect(page.getByTestId('calibration-value').innerText()).resolves.toBe('2560');
  await page.getByText('full scale 40 mV of 81.92 mV').waitFor();
  await page.getByText('Isolate the array first', { exact: false }).waitFor();
  await page.getByText('Fuse the measurement leads', { exact: false }).waitFor();
  await page.getByText('local electrical codes', { exact: false }).waitFor();

  // An install photo (a small PNG made with pngjs), uploaded after the enrollment.
  const photo = new PNG({ width: 64, height: 48 });
  photo.data.fill(200);
  const chooser = page.waitForEvent('filechooser');
  await page.getByTestId('add-photo').click();
  await (await chooser).setFiles({ name: 'install.png', mimeType: 'image/png', buffer: PNG.sync.write(photo) });
  await page.getByRole('button', { name: 'Remove photo' }).waitFor();
  await page.getByTestId('calibration').scrollIntoViewIfNeeded();
  await screenshot(page, 'enroll-details-phone');

  await page.getByTestId('enroll-submit').click();
  await page.getByText(`${labelled.serial} enrolled at Aldmere Village Hall; it turns online at its first check-in.`).waitFor();
  await page.getByText('Install photo saved.').waitFor();
  await screenshot(page, 'enroll-done-phone');

  const res = await admin.get(`/api/loggers/${labelled.id}`);
  expect(res.status).toBe(200);
  expect(res.body.status).toBe('enrolled');
  expect(res.body.site.name).toBe('Aldmere Village Hall');
  expect(res.body.enrolledBy.name).toBe('Tomasz');
  expect(res.body.profile.calibration).toBe(2560);
  expect(res.body.install.photo).toBe(true);
  const stored = await admin.get(`/api/loggers/${labelled.id}/photo`);
  expect(stored.status).toBe(200);
  expect(stored.headers['content-type']).toMatch(/^image\/png/);
  expect((page as Page & { errors?: string[] }).errors).toEqual([]);
  await page.context().close();
});

test('when a typed token is not known, then the screen says the label is not known and what to do', async () => {
  const page = await newPhonePage(plain);
  await signIn(page, base, 'tomasz@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${base}/enroll`);
  await page.getByText('Point the camera at the QR code', { exact: false }).waitFor();
  await screenshot(page, 'enroll-scan-phone');
  // A well-formed token (DEVICE_API.md: "hlt_" + 43 base64url characters) that was never issued.
  await page.getByTestId('enroll-code').fill(`hlt_${'A'.repeat(43)}`);
  await page.getByTestId('enroll-lookup').click();
  await page.getByText('This label is not known', { exact: false }).waitFor();
  // Text that is neither a link nor a token is refused before asking the server.
  await page.getByTestId('enroll-code').fill('FL2-00001');
  await page.getByTestId('enroll-lookup').click();
  await page.getByText('This is not a Heliodor logger label', { exact: false }).waitFor();
  await screenshot(page, 'enroll-unknown-phone');
  await page.context().close();
});

test("when a signed-out integrator opens a label's link, then after sign-in the enroll screen shows that logger", async () => {
  const second = await register('FL2-E2E02', 'C');
  const context = await plain.newContext({ viewport: viewports.wide });
  const page = await context.newPage();
  page.setDefaultTimeout(60_000);
  await page.goto(`${base}/enroll?t=${second.token}`);
  await page.waitForURL(/\/sign-in\?next=/);
  await page.getByTestId('email').fill('tomasz@fernhollow.example');
  await page.getByTestId('password').fill(testPassword);
  await page.getByTestId('sign-in').click();
  await page.getByTestId('enroll-logger').getByText(second.serial).waitFor();
  expect(new URL(page.url()).pathname).toBe('/enroll');
  await page.getByTestId('shunt').fill('100');
  await page.getByTestId('max-current').fill('10');
  await page.getByTestId('panel-voc').fill('48');
  // 10 A × 100 mΩ = 1 V across the shunt, far above the 81.92 mV full scale; 48 V is above the model's 36 V bus limit.
  await page.getByText('the power-monitor chip measures at most 81.9175 mV', { exact: false }).waitFor();
  await page.getByText("above this model's panel voltage limit of 36 V", { exact: false }).waitFor();
  await screenshot(page, 'enroll-refusals-wide');
  await context.close();
});

test('when an admin changes an enrolled logger’s profile, then the new version shows the recomputed calibration', async () => {
  const third = await register('FL2-E2E03', 'A');
  const site = (await admin.get('/api/sites?q=Hollins')).body.rows[0];
  const enrolled = await admin
    .post('/api/enrollments')
    .set(csrf)
    .send({ token: third.token, siteId: site.id, panelWp: 250, panelVocV: 22.5, shuntOhm: 0.002, maxCurrentA: 20, tempResolutionBits: 12 });
  expect(enrolled.status).toBe(201);
  const context = await plain.newContext({ viewport: viewports.wide });
  const page = await context.newPage();
  page.setDefaultTimeout(60_000);
  await signIn(page, base, 'morgan@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${base}/loggers/${third.id}`);
  await page.getByTestId('profile-version').getByText('version 1', { exact: true }).waitFor();
  await page.getByTestId('change-profile').click();
  await page.getByTestId('profile-shunt').fill('1');
  // INA226 data sheet, Equation 1: CAL = 0.00512 / (Current_LSB × R_SHUNT) = 0.00512 / (1 mA × 1 mΩ) = 5120.
  await page.getByTestId('calibration-details').click(); // register values sit behind Details
  await expect(page.getByTestId('calibration-value').innerText()).resolves.toBe('5120');
  await screenshot(page, 'logger-profile-edit-wide');
  await page.getByTestId('profile-save').click();
  // The form's own line says "Saving makes version 2"; the saved version is the badge's.
  await page.getByTestId('profile-version').getByText('version 2', { exact: true }).waitFor();
  const res = await admin.get(`/api/loggers/${third.id}`);
  expect(res.body.profile).toMatchObject({ version: 2, shuntOhm: 0.001, calibration: 5120 });
  await screenshot(page, 'logger-detail-wide');
  await context.close();
});
