// With production settings, at phone and wide sizes: a release engineer without a second factor who
// signs in is sent to set it up before anything else — other pages send her back and the API refuses
// her with 403 — and once it is on, the console opens.
import jsQR from 'jsqr';
import { PNG } from 'pngjs';
import { testPassword } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';
import { codeFor } from '../helpers/totp';
import { hashPassword } from '../../server/auth/passwords';
import { User } from '../../server/db/models';

const session = browserApp({ seed: 'demo', config: { production: true, publicUrl: 'http://127.0.0.1:9', devMailbox: false } });

test.each(Object.entries(viewports))('when a release engineer without a second factor signs in at %s size, then she is sent to set it up before anything else', async (size, viewport) => {
  const email = `ilse.${size}@fernhollow.example`;
  await User.create({ email, name: `Ilse ${size}`, role: 'release_engineer', passwordHash: await hashPassword(testPassword, 10) });
  const context = await session.browser.newContext({ viewport });
  const page = await context.newPage();
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  await signIn(page, session.base, email, testPassword);
  await page.waitForURL(/\/second-factor/);
  await page.getByRole('heading', { name: 'Set up a second factor' }).waitFor();
  // Any other page sends her back, and the API refuses her.
  await page.goto(`${session.base}/releases`);
  await page.waitForURL(/\/second-factor/);
  await page.getByRole('heading', { name: 'Set up a second factor' }).waitFor();
  const refused = await page.request.get(`${session.base}/api/releases`);
  expect(refused.status()).toBe(403);
  expect((await refused.json()).type).toMatch(/second-factor-setup-required$/);

  await page.getByTestId('second-factor-start').click();
  await page.getByTestId('second-factor-qr').waitFor();
  await screenshot(page, `production-second-factor-first-${size}`);
  const secret = (await page.getByTestId('second-factor-secret').innerText()).replace(/\s+/g, '');
  // The QR code on screen, read back by reference decoders (pngjs, jsqr), carries the same secret.
  const png = PNG.sync.read(await page.getByTestId('second-factor-qr').screenshot());
  const qr = jsQR(new Uint8ClampedArray(png.data), png.width, png.height);
  expect(qr).not.toBeNull();
  const uri = new URL(qr!.data);
  expect(uri.protocol).toBe('otpauth:');
  expect(uri.searchParams.get('secret')).toBe(secret);
  expect(decodeURIComponent(uri.pathname)).toContain(`Heliodor:${email}`);
  await page.getByTestId('second-factor-confirm-code').fill(codeFor(secret));
  await page.getByTestId('second-factor-confirm').click();
  await page.getByTestId('recovery-codes').waitFor();
  await screenshot(page, `production-recovery-codes-${size}`);
  await page.getByTestId('recovery-codes-done').click();
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  expect((await page.request.get(`${session.base}/api/releases`)).status()).toBe(200);
  expect(errors).toEqual([]);
  await context.close();
});
