// The model's signing page in the browser: Morgan (admin) changes FL-2's signing rule to 2 of 3 with
// the confirmation, the next trust set waits for signatures; Priya (release engineer) signs it offline
// with the CLI's own function and pastes the output; loggers' next set is then in force. TUF's rule
// (docs/SOURCES.md §6): the next version is signed by the threshold of the current one.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { csrf, testPassword } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';
import { newSigningKey, signTrustSetFile } from '../../scripts/cli/commands';

const s = browserApp();
let work: string;
let modelId: string;
const keys: Awaited<ReturnType<typeof newSigningKey>>[] = [];

beforeAll(async () => {
  work = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-signing-e2e-'));
  const admin = s.t.agent();
  expect((await admin.post('/api/auth/sign-in').send({ email: 'morgan@fernhollow.example', password: testPassword })).status).toBe(200);
  // Three keys; the first becomes version 1, and version 2 (all three, 1 of them) is signed by it.
  for (const name of ['morgan', 'priya', 'bench']) {
    const key = await newSigningKey({ algorithm: 'ed25519', out: path.join(work, 'keys'), name });
    keys.push(key);
    expect((await admin.post('/api/keys').set(csrf).send({ name: `${name[0].toUpperCase()}${name.slice(1)}’s key`, publicKeyPem: fs.readFileSync(key.publicKeyFile, 'utf8') })).status).toBe(201);
  }
  modelId = (await admin.get('/api/models')).body.rows.find((m: { name: string }) => m.name === 'FL-2 field logger').id;
  const pending = (await admin.get(`/api/models/${modelId}/trust`)).body.pending;
  const setFile = path.join(work, 'v2.json');
  fs.writeFileSync(setFile, pending.canonical);
  const body = JSON.parse(await signTrustSetFile({ key: keys[0].privateKeyFile, set: setFile }));
  expect((await admin.post(`/api/models/${modelId}/trust/signatures`).set(csrf).send(body)).status).toBe(200);
});
afterAll(() => fs.rmSync(work, { recursive: true, force: true }));

test('when Morgan sets the rule to 2 of 3 and Priya pastes her trust sign output, then version 3 of the trust set is in force', async () => {
  const page = await s.browser.newPage({ viewport: viewports.phone });
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  await signIn(page, s.base, 'morgan@fernhollow.example', testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${s.base}/models`);
  await page.getByTestId('model-signing-FL-2 field logger').click();
  await page.getByTestId('signing-rule').waitFor();
  expect(await page.getByTestId('signing-rule-figure').innerText()).toBe('1 of 3');
  await page.getByTestId('signing-threshold').fill('2');
  await page.getByTestId('change-rule').click();
  const dialog = page.getByTestId('confirm-rule');
  await dialog.waitFor();
  expect(await dialog.innerText()).toContain('A new trust set version 3 will need signatures by 1 key of version 2');
  await screenshot(page, 'model-signing-confirm-phone');
  await page.getByTestId('confirm-rule-confirm').click();
  await page.getByTestId('trust-pending').waitFor();
  expect(await page.getByTestId('signing-rule-figure').innerText()).toBe('2 of 3');
  expect(await page.getByTestId('trust-pending-count').innerText()).toBe('0 of 1 signed');
  expect(await page.getByTestId('trust-sign-command').innerText()).toBe('heliodor trust sign --key <your key>.private.pem trust-set-v3.json');
  await screenshot(page, 'model-signing-pending-phone');

  // Priya, at 1280 × 800: reads the text, signs it offline, pastes what the command printed.
  const wide = await s.browser.newPage({ viewport: viewports.wide });
  wide.on('pageerror', (e) => errors.push(e.message));
  await signIn(wide, s.base, 'priya@fernhollow.example', testPassword);
  await wide.getByRole('heading', { name: 'Overview' }).waitFor();
  await wide.goto(`${s.base}/models/${modelId}`);
  const canonical = await wide.getByTestId('trust-canonical').innerText();
  expect(await wide.getByTestId('change-rule').count()).toBe(0);
  await screenshot(wide, 'model-signing-pending-wide');
  const setFile = path.join(work, 'trust-set-v3.json');
  fs.writeFileSync(setFile, canonical);
  await wide.getByTestId('trust-signature').fill(await signTrustSetFile({ key: keys[1].privateKeyFile, set: setFile }));
  await wide.getByTestId('add-trust-signature').click();
  await wide.getByTestId('trust-nothing-pending').waitFor();
  expect(await wide.getByTestId('trust-current').innerText()).toContain('Loggers follow version 3');
  await screenshot(wide, 'model-signing-signed-wide');
  expect(errors).toEqual([]);
}, 120_000);
