import { testPassword } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';

const session = browserApp({ seed: 'demo' });

describe.each(Object.entries(viewports))('signed-in shell at %s size', (name, viewport) => {
  test('when the demo admin signs in, then the overview shows fleet numbers and sign-out returns to the sign-in screen', async () => {
    const page = await session.browser.newPage({ viewport });
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await page.goto(session.base);
    await page.waitForURL(/\/sign-in/);
    await screenshot(page, `sign-in-${name}`);

    await signIn(page, session.base, 'morgan@fernhollow.example', testPassword);
    await page.getByRole('heading', { name: 'Overview' }).waitFor();
    await page.getByTestId('figure-loggers').waitFor();
    const loggers = await page.getByTestId('figure-loggers').innerText();
    const [[{ total }]] = (await session.t.sequelize.query('SELECT count(*)::int AS total FROM loggers')) as [{ total: number }[], unknown];
    expect(loggers).toContain(String(total));
    await screenshot(page, `overview-${name}`);

    if (name === 'wide') {
      await expect(page.getByRole('navigation', { name: 'Main' }).isVisible()).resolves.toBe(true);
      await page.getByRole('button', { name: 'Sign out' }).click();
    } else {
      await page.getByRole('tab', { name: 'More' }).click();
      await page.getByRole('heading', { name: 'More' }).waitFor();
      await screenshot(page, `more-${name}`);
      await page.getByRole('button', { name: 'Sign out' }).click();
    }
    await page.waitForURL(/\/sign-in/);
    expect(errors).toEqual([]);
    await page.close();
  });
});

test('when the password is wrong, then the sign-in screen says so and stays', async () => {
  const page = await session.browser.newPage({ viewport: viewports.phone });
  await signIn(page, session.base, 'morgan@fernhollow.example', 'definitely-wrong');
  await page.getByText('The e-mail or password is not right.').waitFor();
  expect(page.url()).toContain('/sign-in');
  await screenshot(page, 'sign-in-wrong-password-phone');
  await page.close();
});

test('when a signed-out person opens a console page, then they are sent to sign in and come back after', async () => {
  const page = await session.browser.newPage({ viewport: viewports.wide });
  await page.goto(`${session.base}/activity`);
  await page.waitForURL(/\/sign-in\?next=/);
  await page.getByTestId('email').fill('lena@fernhollow.example');
  await page.getByTestId('password').fill(testPassword);
  await page.getByTestId('sign-in').click();
  await page.getByRole('heading', { name: 'Activity' }).waitFor();
  expect(new URL(page.url()).pathname).toBe('/activity');
  await page.close();
});

test('when an unknown page is opened, then the 404 screen offers a way back', async () => {
  const page = await session.browser.newPage({ viewport: viewports.phone });
  await page.goto(`${session.base}/no/such/page`);
  await page.getByRole('heading', { name: 'Page not found' }).waitFor();
  await page.close();
});
