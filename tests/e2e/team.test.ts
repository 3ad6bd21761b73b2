// The team in the browser, at phone and wide sizes: the admin invites an integrator; the integrator opens
// the link from the Mailbox, sets a password and is signed in, sees no Team entry and gets 403 from the
// team API; the admin disables them and their open page is sent to sign-in at its next request. A release
// engineer turns the second factor on from the Account page and is then asked for a code at sign-in,
// signing in with one computed from the shown secret (tests/helpers/totp.ts, checked against RFC 6238
// Appendix B). At the end, the Activity screen shows a sentence for every team change the test made.
// (With production settings: tests/e2e/team-production.test.ts.)
import type { Browser, Page } from 'playwright-core';
import { Op } from 'sequelize';
import { testPassword } from '../helpers/app';
import { browserApp, journeyAt, screenshot, signIn, viewports } from '../helpers/browser';
import { codeFor } from '../helpers/totp';
import { hashPassword } from '../../server/auth/passwords';
import { Activity, User } from '../../server/db/models';
import { TEAM_ACTIVITY_ACTIONS } from '../../schemas/words';

const session = browserApp({ seed: 'demo' });
const started = new Date();

async function newPage(browser: Browser, viewport: { width: number; height: number }) {
  const context = await browser.newContext({ viewport });
  const page = await context.newPage();
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  return { context, page, errors };
}

/** Opens a destination the way a person would: the sidebar on wide screens, More on phones. */
async function open(page: Page, wide: boolean, label: string, heading = label) {
  if (wide) await page.getByRole('navigation', { name: 'Main' }).getByText(label, { exact: true }).click();
  else {
    await page.getByRole('tab', { name: 'More' }).click();
    await page.getByRole('heading', { name: 'More' }).waitFor();
    await page.getByText(label, { exact: true }).click();
  }
  await page.getByRole('heading', { name: heading, exact: true }).waitFor();
}

async function destinationLabels(page: Page, wide: boolean): Promise<string> {
  if (wide) return page.getByRole('navigation', { name: 'Main' }).innerText();
  await page.getByRole('tab', { name: 'More' }).click();
  await page.getByRole('heading', { name: 'More' }).waitFor();
  return page.locator('body').innerText();
}

// Each journey runs once, at the size its person would use (journeyAt): the admin's invitation at a
// desk, the forgotten password and the second factor on a phone.

describe.each(Object.entries(viewports))('team and accounts at %s size', (size, viewport) => {
  const wide = size === 'wide';

  journeyAt(size, 'wide')('when the admin invites an integrator and later disables them, then the invitee joins from the mailed link, cannot reach the team, and is sent to sign-in at the next request after', async () => {
    const email = `noor.${size}.${Date.now()}@fernhollow.example`;
    const admin = await newPage(session.browser, viewport);
    await signIn(admin.page, session.base, 'morgan@fernhollow.example', testPassword);
    await admin.page.getByRole('heading', { name: 'Overview' }).waitFor();
    await open(admin.page, wide, 'Team');
    await admin.page.getByTestId('invite-email').fill(email);
    await admin.page.getByRole('radio', { name: 'Integrator' }).first().click();
    await admin.page.getByTestId('invite-send').click();
    await admin.page.getByText(`Invitation sent to ${email}`).waitFor();
    await admin.page.getByTestId(`status-${email}`).waitFor();
    await screenshot(admin.page, `team-invited-${size}`);

    // The Mailbox shows the invitation; its first line is the link.
    await open(admin.page, wide, 'Mailbox');
    const card = admin.page.getByText(`To ${email}`).locator('xpath=..');
    const link = await card.getByTestId('mail-link').first().getAttribute('href');
    expect(link).toMatch(/\/invitation#t=hiv_/);
    await screenshot(admin.page, `mailbox-invitation-${size}`);

    // The integrator, in a browser of their own.
    const invitee = await newPage(session.browser, viewport);
    await invitee.page.goto(link!);
    await invitee.page.getByRole('heading', { name: 'Join the team' }).waitFor();
    await invitee.page.getByTestId('invitation-role').getByText('Integrator').waitFor();
    await invitee.page.getByText(`Morgan invited ${email} to Heliodor.`).waitFor();
    await invitee.page.getByTestId('join-name').fill(`Noor ${size}`);
    await invitee.page.getByTestId('join-password').fill('noor walks the aldmere lines');
    await invitee.page.getByTestId('join-password-repeat').fill('noor walks the aldmere lines');
    await screenshot(invitee.page, `invitation-${size}`);
    await invitee.page.getByTestId('join').click();
    await invitee.page.getByRole('heading', { name: 'Overview' }).waitFor();
    const labels = await destinationLabels(invitee.page, wide);
    expect(labels).toContain('Account');
    expect(labels).not.toContain('Team');
    expect((await invitee.page.request.get(`${session.base}/api/team`)).status()).toBe(403);

    // The admin disables them; the invitee's open page goes to sign-in at its next request.
    await open(admin.page, wide, 'Team');
    await admin.page.getByTestId(`disable-${email}`).click();
    await admin.page.getByTestId('confirm-member').getByRole('button', { name: 'Disable' }).click();
    await admin.page.getByText(`Noor ${size} is disabled and signed out`).waitFor();
    await screenshot(admin.page, `team-disabled-${size}`);
    if (wide) await invitee.page.getByRole('navigation', { name: 'Main' }).getByText('Loggers', { exact: true }).click();
    else await invitee.page.getByRole('tab', { name: 'Loggers' }).click();
    await invitee.page.waitForURL(/\/sign-in/);
    await invitee.page.getByTestId('email').waitFor();

    expect(admin.errors).toEqual([]);
    expect(invitee.errors).toEqual([]);
    await admin.context.close();
    await invitee.context.close();
  });

  journeyAt(size, 'phone')('when someone forgot their password, then the link from the Mailbox lets them choose a new one and sign in with it', async () => {
    const email = `wren.${size}.${Date.now()}@fernhollow.example`;
    await User.create({ email, name: `Wren ${size}`, role: 'support', passwordHash: await hashPassword('the password wren forgot', 10) });
    const p = await newPage(session.browser, viewport);
    await p.page.goto(`${session.base}/sign-in`);
    await p.page.getByTestId('forgot-password').click();
    await p.page.getByRole('heading', { name: 'Forgotten password' }).waitFor();
    await p.page.getByTestId('reset-email').fill(email);
    await p.page.getByTestId('reset-send').click();
    await p.page.getByText('Check your e-mail').waitFor();
    await screenshot(p.page, `forgot-password-${size}`);

    const admin = await newPage(session.browser, viewport);
    await signIn(admin.page, session.base, 'morgan@fernhollow.example', testPassword);
    await admin.page.getByRole('heading', { name: 'Overview' }).waitFor();
    await open(admin.page, wide, 'Mailbox');
    const card = admin.page.getByText(`To ${email}`).locator('xpath=..');
    const link = await card.getByTestId('mail-link').first().getAttribute('href');
    expect(link).toMatch(/\/reset-password#t=hpr_/);
    await admin.context.close();

    await p.page.goto(link!);
    await p.page.getByRole('heading', { name: 'Choose a new password' }).waitFor();
    await p.page.getByTestId('new-password').fill('wren remembers this one');
    await p.page.getByTestId('new-password-repeat').fill('wren remembers this one');
    await screenshot(p.page, `reset-password-${size}`);
    await p.page.getByTestId('reset-confirm').click();
    await p.page.getByRole('heading', { name: 'Password changed' }).waitFor();
    await p.page.getByTestId('reset-sign-in').click();
    await signIn(p.page, session.base, email, 'wren remembers this one');
    await p.page.getByRole('heading', { name: 'Overview' }).waitFor();
    expect(p.errors).toEqual([]);
    await p.context.close();
  });

  journeyAt(size, 'phone')('when a release engineer turns the second factor on from the Account page, then the next sign-in asks for a code and one computed from the shown secret signs her in', async () => {
    const email = `rafa.${size}.${Date.now()}@fernhollow.example`;
    await User.create({ email, name: `Rafa ${size}`, role: 'release_engineer', passwordHash: await hashPassword(testPassword, 10) });
    const p = await newPage(session.browser, viewport);
    await signIn(p.page, session.base, email, testPassword);
    await p.page.getByRole('heading', { name: 'Overview' }).waitFor();
    // The demo keeps one-step sign-in and invites her to set up a second factor.
    await p.page.getByTestId('second-factor-invite').waitFor();
    await open(p.page, wide, 'Account');
    await p.page.getByTestId('second-factor-start').click();
    await p.page.getByTestId('second-factor-qr').waitFor();
    const secret = (await p.page.getByTestId('second-factor-secret').innerText()).replace(/\s+/g, '');
    expect(secret).toMatch(/^[A-Z2-7]{32}$/);
    await screenshot(p.page, `account-second-factor-${size}`);
    await p.page.getByTestId('second-factor-confirm-code').fill(codeFor(secret));
    await p.page.getByTestId('second-factor-confirm').click();
    await p.page.getByTestId('recovery-codes').waitFor();
    expect((await p.page.getByTestId('recovery-codes').innerText()).match(/[a-z2-7]{4}-[a-z2-7]{4}-[a-z2-7]{4}-[a-z2-7]{4}/g)).toHaveLength(10);
    await screenshot(p.page, `account-recovery-codes-${size}`);
    await p.page.getByTestId('recovery-codes-done').click();
    await p.page.getByTestId('second-factor-state').getByText('On').waitFor();

    // Signed out, then in again: the password step asks for a code.
    await p.context.clearCookies();
    await signIn(p.page, session.base, email, testPassword);
    await p.page.getByRole('heading', { name: 'Second factor' }).waitFor();
    await screenshot(p.page, `sign-in-second-factor-${size}`);
    // The app's code for the next 30-second step: the one used to turn it on is never accepted twice.
    await p.page.getByTestId('second-factor-code').fill(codeFor(secret, new Date(Date.now() + 30_000)));
    await p.page.getByTestId('second-factor-submit').click();
    await p.page.getByRole('heading', { name: 'Overview' }).waitFor();
    expect(await p.page.getByTestId('second-factor-invite').count()).toBe(0);
    expect(p.errors).toEqual([]);
    await p.context.close();
  });
});

test('when the team tests are done, then the Activity screen shows a sentence for every team change they made', async () => {
  const rows = await Activity.findAll({ where: { action: { [Op.in]: [...TEAM_ACTIVITY_ACTIONS] }, at: { [Op.gte]: started } }, order: [['id', 'DESC']] });
  const actions = new Set(rows.map((r) => r.action));
  for (const a of ['person.invited', 'person.joined', 'person.disabled', 'person.second_factor_on', 'person.password_reset']) expect(actions).toContain(a);
  const p = await newPage(session.browser, viewports.wide);
  await signIn(p.page, session.base, 'morgan@fernhollow.example', testPassword);
  await p.page.getByRole('heading', { name: 'Overview' }).waitFor();
  await p.page.goto(`${session.base}/activity`);
  await p.page.getByRole('heading', { name: 'Activity' }).waitFor();
  await p.page.getByText(rows[0].summary, { exact: true }).first().waitFor();
  const shown = await p.page.locator('body').innerText();
  for (const r of rows) expect(shown).toContain(r.summary);
  await screenshot(p.page, 'activity-team-wide');
  await p.context.close();
});
