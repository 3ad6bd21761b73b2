// The release engineer's journey in the browser: upload a signed image, see the
// progress bar and the draft, start the pilot, widen to 25 %. Signing happens here, offline, with
// the CLI's own functions (node:crypto underneath); the console only ever sees the public key.
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Browser, Page } from 'playwright-core';
import { csrf, startTestApp, testPassword, type TestApp } from '../helpers/app';
import { launchChromium, screenshot, signIn, viewports } from '../helpers/browser';
import { newSigningKey, signManifestFile, writeManifest } from '../../scripts/cli/commands';

let t: TestApp;
let base: string;
let browser: Browser;
let work: string;
const files = { image: '', otherImage: '', manifest: '', signature: '' };
const version = '2.4.0';

beforeAll(async () => {
  t = await startTestApp({ seed: 'demo' });
  base = await t.listen();
  browser = await launchChromium();
  work = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-release-e2e-'));

  // Offline: a key pair, an image for FL-2 boards B and C, its canonical manifest and signature.
  const key = await newSigningKey({ algorithm: 'ed25519', out: path.join(work, 'keys'), name: 'fernhollow-2026' });
  const admin = t.agent();
  expect((await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword })).status).toBe(200);
  const registered = await admin.post('/api/keys').set(csrf).send({ name: 'Fernhollow release key 2026', publicKeyPem: fs.readFileSync(key.publicKeyFile, 'utf8') });
  expect(registered.status).toBe(201);

  const models = await admin.get('/api/models');
  expect(models.status).toBe(200);
  const fl2 = (models.body.rows as { id: string; name: string }[]).find((m) => m.name === 'FL-2 field logger');
  expect(fl2).toBeDefined();

  files.image = path.join(work, 'fl2-2.4.0.bin');
  // 768 KiB of random bytes: large enough for the browser to report upload progress.
  fs.writeFileSync(files.image, crypto.randomBytes(768 * 1024));
  // The same size with one byte changed: only the SHA-256 tells them apart.
  files.otherImage = path.join(work, 'fl2-2.4.0-rebuilt.bin');
  const rebuilt = fs.readFileSync(files.image);
  rebuilt[0] ^= 0xff;
  fs.writeFileSync(files.otherImage, rebuilt);
  files.manifest = path.join(work, 'manifest.json');
  fs.writeFileSync(files.manifest, await writeManifest({ image: files.image, model: fl2!.id, version, boards: 'B,C', counter: '5' }));
  files.signature = path.join(work, 'manifest.sig');
  fs.writeFileSync(files.signature, await signManifestFile({ key: key.privateKeyFile, manifest: files.manifest }));
});

afterAll(async () => {
  await browser?.close();
  await t?.close();
  if (work) fs.rmSync(work, { recursive: true, force: true });
});

function collectErrors(page: Page) {
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  return errors;
}

test('when the release engineer uploads a signed image, starts the pilot and widens to 25 %, then the release is widening at 25 % with its history', async () => {
  const page = await browser.newPage({ viewport: viewports.wide });
  const errors = collectErrors(page);
  await signIn(page, base, 'priya@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();

  await page.getByRole('navigation', { name: 'Main' }).getByText('Releases', { exact: true }).click();
  await page.getByRole('heading', { name: 'Releases', exact: true }).waitFor();
  await page.getByText('No releases yet — upload a signed image to create a draft.').waitFor();
  await screenshot(page, 'release-list-empty-wide');

  await page.getByTestId('new-release').click();
  await page.getByRole('heading', { name: 'New release' }).waitFor();
  // First a rebuilt image the manifest was not made for: refused, with the part named and nothing stored.
  await page.getByTestId('file-image').setInputFiles(files.otherImage);
  await page.getByTestId('file-manifest').setInputFiles(files.manifest);
  await page.getByTestId('file-signature').setInputFiles(files.signature);
  await page.getByTestId('upload').click();
  const refused = page.getByTestId('upload-refused');
  await refused.waitFor();
  expect(await refused.innerText()).toMatch(/SHA-256/);
  expect(await refused.innerText()).toContain('Nothing was stored');
  await refused.scrollIntoViewIfNeeded();
  await screenshot(page, 'release-refused-wide');
  expect(fs.readdirSync(t.storeDir, { recursive: true, withFileTypes: true }).filter((e) => e.isFile())).toEqual([]);

  await page.getByTestId('file-image').setInputFiles(files.image);
  await page.getByTestId('notes').fill('## What changes\n\n- Steadier readings from the temperature probe\n- Faster check-in after a brown-out');
  await screenshot(page, 'release-new-files-wide');
  await page.getByTestId('upload').click();

  // The progress bar reports the upload in percent and stays at 100 % once the checks passed.
  const progress = page.getByTestId('upload-progress').getByRole('progressbar');
  await progress.waitFor();
  await page.getByTestId('check-summary').waitFor();
  expect(await progress.getAttribute('aria-valuenow')).toBe('100');
  expect(await page.getByTestId('upload-progress').innerText()).toContain('100 %');
  expect(await page.getByTestId('created-state').innerText()).toBe('Draft');
  await screenshot(page, 'release-uploaded-draft-wide');

  const admin = t.agent();
  await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword });
  const list = await admin.get('/api/releases');
  expect(list.body.rows).toHaveLength(1);
  const id: string = list.body.rows[0].id;
  expect(list.body.rows[0]).toMatchObject({ version, state: 'draft' });

  // Targeting: one pilot site; then start the pilot, confirmed.
  await page.getByRole('checkbox', { name: 'Aldmere Village Hall' }).click();
  await page.getByTestId('start-pilot').click();
  const pilotDialog = page.getByTestId('confirm-start-pilot');
  await pilotDialog.waitFor();
  expect(await pilotDialog.innerText()).toContain('1 pilot site');
  await screenshot(page, 'release-start-pilot-confirm-wide');
  await page.getByTestId('confirm-start-pilot-confirm').click();

  await page.waitForURL(new RegExp(`/releases/${id}$`));
  await page.getByTestId('release-state').getByText('Pilot', { exact: true }).waitFor();
  await screenshot(page, 'release-pilot-wide');

  // Widen to 25 %: the confirmation shows how many more loggers become eligible.
  await page.getByTestId('widen-25').click();
  const dialog = page.getByTestId('confirm-move');
  await dialog.getByTestId('estimate').waitFor();
  const estimate = await admin.get(`/api/releases/${id}/estimate?share=25`);
  expect(estimate.status).toBe(200);
  expect(await dialog.innerText()).toContain(`about ${estimate.body.more} more`);
  await screenshot(page, 'release-widen-confirm-wide');
  await page.getByTestId('confirm-move-confirm').click();

  await page.getByTestId('release-state').getByText('Widening', { exact: true }).waitFor();
  expect(await page.getByTestId('release-share').innerText()).toContain('25 %');
  expect(await page.getByTestId('history').innerText()).toContain('Widened to 25 %');
  await screenshot(page, 'release-widening-wide');

  const detail = await admin.get(`/api/releases/${id}`);
  expect(Number(detail.body.share)).toBe(25);
  expect(detail.body).toMatchObject({ state: 'widening', pilotSites: [{ name: 'Aldmere Village Hall' }] });
  expect(detail.body.history.map((h: { action: string }) => h.action)).toEqual(expect.arrayContaining(['start_pilot', 'widen']));
  expect(errors).toEqual([]);
  await page.close();
});

test('when the releases list is opened on a phone, then releases show as cards with state and share', async () => {
  const page = await browser.newPage({ viewport: viewports.phone });
  const errors = collectErrors(page);
  await signIn(page, base, 'priya@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.getByRole('tab', { name: 'Releases' }).click();
  await page.getByRole('heading', { name: 'Releases', exact: true }).waitFor();
  const card = page.getByTestId('release-card').first();
  await card.waitFor();
  expect(await card.innerText()).toContain(version);
  expect(await page.getByTestId('release-table').count()).toBe(0);
  await screenshot(page, 'release-list-phone');

  await card.click();
  await page.getByTestId('release-state').waitFor();
  await screenshot(page, 'release-detail-phone');
  expect(errors).toEqual([]);
  await page.close();
});

test('when an admin opens signing keys and creates an API token, then the key is listed and the token is shown once', async () => {
  for (const [name, viewport] of Object.entries(viewports)) {
    const page = await browser.newPage({ viewport });
    const errors = collectErrors(page);
    await signIn(page, base, 'morgan@fernhollow.example', testPassword);
    await page.getByRole('heading', { name: 'Overview' }).waitFor();
    await page.goto(`${base}/keys`);
    await page.getByRole('heading', { name: 'Signing keys' }).waitFor();
    await page.getByTestId('key-card').first().waitFor();
    expect(await page.getByTestId('key-card').first().innerText()).toContain('Fernhollow release key 2026');
    await page.getByText('Paste the PUBLIC key').waitFor();
    await screenshot(page, `keys-${name}`);

    await page.goto(`${base}/tokens`);
    await page.getByRole('heading', { name: 'API tokens' }).waitFor();
    await page.getByTestId('token-name').fill(`Build server (${name})`);
    await page.getByTestId('create-token').click();
    const token = page.getByTestId('new-token');
    await token.waitFor();
    // API tokens: `hat_` followed by 43 base64url characters.
    expect(await token.innerText()).toMatch(/^hat_[A-Za-z0-9_-]{43}$/);
    await page.getByTestId('token-card').first().waitFor();
    await screenshot(page, `tokens-${name}`);
    expect(errors).toEqual([]);
    await page.close();
  }
});
