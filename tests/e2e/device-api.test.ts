// Settings → Device API in the browser, at phone and wide sizes (docs/DESIGN.md: 390×844 and 1280×800).
import { testPassword } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';

const session = browserApp({ seed: 'demo' });

describe.each(Object.entries(viewports))('Device API page at %s size', (name, viewport) => {
  test('when a release engineer opens Settings · Device API, then both endpoints, examples, statuses and choices show, and the OpenAPI document opens', async () => {
    const page = await session.browser.newPage({ viewport });
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await signIn(page, session.base, 'priya@fernhollow.example', testPassword);
    await page.getByRole('heading', { name: 'Overview' }).waitFor();
    if (name === 'phone') {
      await page.getByRole('tab', { name: 'More' }).click();
      await page.getByRole('heading', { name: 'More' }).waitFor();
    }
    await page.getByText('Settings · Device API').first().click();
    await page.getByRole('heading', { name: 'Device API' }).waitFor();
    await expect(page.getByText('/api/device/v1/check-in', { exact: true }).isVisible()).resolves.toBe(true);
    await expect(page.getByText('/api/device/v1/images/{sha256}', { exact: true }).isVisible()).resolves.toBe(true);
    await expect(page.getByText(`curl -sS -X POST ${session.base}/api/device/v1/check-in`, { exact: false }).first().isVisible()).resolves.toBe(true);
    await expect(page.getByText('rolled back by the bootloader', { exact: false }).first().isVisible()).resolves.toBe(true);
    await screenshot(page, `device-api-${name}`);
    await page.getByRole('heading', { name: 'Statuses' }).scrollIntoViewIfNeeded();
    await screenshot(page, `device-api-statuses-${name}`);

    const [doc] = await Promise.all([page.waitForEvent('popup'), page.getByRole('button', { name: 'Open OpenAPI document' }).click()]);
    await doc.waitForLoadState();
    expect(doc.url()).toBe(`${session.base}/api/device/v1/openapi.json`);
    expect(JSON.parse(await doc.locator('body').innerText()).openapi).toBe('3.1.0');
    await doc.close();
    expect(errors).toEqual([]);
    await page.close();
  });
});
