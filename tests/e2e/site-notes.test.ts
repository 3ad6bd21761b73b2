// Site notes in the browser: at a desk (wide, UTC beside the site's time) support opens a site from the sites
// list, adds a note, reloads the page and still reads it (the list comes from the server, not from this
// visit); older notes come a page at a time; on a phone, an integrator assigned to the site reads the notes without
// the form. Expected notes come from the API at run time.
import type { Page } from 'playwright-core';
import { testPassword } from '../helpers/app';
import { browserApp, journeyAt, screenshot, signIn, viewports } from '../helpers/browser';

const session = browserApp({ seed: 'demo' });
const siteName = 'Brackenford Pump House';
type Note = { id: string; text: string; authorName: string; createdAt: string };

/**
 * London wall-clock time worked out from the tz database's rules (docs/SOURCES.md §18), written here
 * without Intl: `Zone Europe/London 0:00 EU GMT/BST`, `Rule EU … Mar lastSun 1:00u 1:00 S` and
 * `Rule EU … Oct lastSun 1:00u 0 -`: BST (UTC+1) from 01:00 UTC on the last Sunday of March to 01:00 UTC
 * on the last Sunday of October, GMT otherwise.
 */
function londonTime(iso: string): string {
  const t = new Date(iso);
  const lastSunday = (month: number) => {
    const last = new Date(Date.UTC(t.getUTCFullYear(), month + 1, 0, 1)); // the month's last day, 01:00 UTC
    return Date.UTC(t.getUTCFullYear(), month, last.getUTCDate() - last.getUTCDay(), 1);
  };
  const summer = t.getTime() >= lastSunday(2) && t.getTime() < lastSunday(9);
  const local = new Date(t.getTime() + (summer ? 3_600_000 : 0));
  return `${local.toISOString().replace('T', ' ').slice(0, 16)} ${summer ? 'BST' : 'GMT'}`;
}

async function siteId(): Promise<string> {
  const [[row]] = (await session.t.sequelize.query('SELECT id FROM sites WHERE name = :name', { replacements: { name: siteName } })) as [{ id: string }[], unknown];
  return row.id;
}

async function openSite(page: Page, email: string) {
  await signIn(page, session.base, email, testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${session.base}/sites`);
  await page.getByTestId('site-card').filter({ hasText: siteName }).first().click();
  await page.getByRole('heading', { name: siteName }).waitFor();
}

describe.each(Object.entries(viewports))('site notes at %s size', (size, viewport) => {
  journeyAt(size, 'wide')('when support adds a note to a site and reloads the page, then the note is still there, newest first, with author and time', async () => {
    const context = await session.browser.newContext({ viewport });
    const page = await context.newPage();
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(e.message));
    await openSite(page, 'lena@fernhollow.example');

    const text = `Gate code changed to the pump-house sign's last four digits (${size}). <b>Not bold</b> & "quoted".`;
    await page.getByTestId('note-text').fill(text);
    await page.getByTestId('note-add').click();
    await page.getByText('Note saved.').waitFor();
    const list = page.getByTestId('site-notes-list');
    await list.getByText(text, { exact: true }).waitFor();

    await page.reload();
    await page.getByRole('heading', { name: siteName }).waitFor();
    await list.getByText(text, { exact: true }).waitFor();
    // Newest first, as the API answers; the markup is shown as the characters typed.
    const { rows, total } = (await (await page.request.get(`${session.base}/api/sites/${await siteId()}/notes`)).json()) as { rows: Note[]; total: number };
    expect(rows[0].text).toBe(text);
    const shown = await list.getByRole('listitem').evaluateAll((els) => els.map((e) => (e as HTMLElement).innerText));
    expect(shown).toHaveLength(Math.min(total, 20));
    shown.forEach((item, i) => expect(item).toContain(rows[i].text));
    // The demo sites are in Europe/London: the note is dated in site time, UTC beside it on wide screens.
    const utc = `${rows[0].createdAt.replace('T', ' ').slice(0, 16)} UTC`;
    expect(shown[0]).toContain(`${rows[0].authorName} · ${londonTime(rows[0].createdAt)}${size === 'wide' ? ` · ${utc}` : ''}`);
    await list.scrollIntoViewIfNeeded();
    await screenshot(page, `site-notes-${size}`);
    expect(errors).toEqual([]);
    await context.close();
  });
});

test('when a site has more notes than one page, then "Show older notes" brings the rest, and an assigned integrator reads them without the form', async () => {
  const id = await siteId();
  // 25 older notes, a minute apart, an hour before any note this file adds.
  await session.t.sequelize.query(
    `INSERT INTO notes (target_type, target_id, text, author_name, created_at)
     SELECT 'site', :id, 'Older note ' || lpad(i::text, 2, '0'), 'Morgan', now() - interval '1 hour' - i * interval '1 minute' FROM generate_series(1, 25) i`,
    { replacements: { id } },
  );
  expect((await fetch(`${session.base}/api/sites/${id}/notes`)).status).toBe(401); // signed out: nobody reads notes

  const context = await session.browser.newContext({ viewport: viewports.phone });
  const page = await context.newPage();
  await openSite(page, 'ade@fernhollow.example'); // assigned to Brackenford Pump House in the demo scenario
  const list = page.getByTestId('site-notes-list');
  await list.getByRole('listitem').first().waitFor();
  expect(await page.getByTestId('note-form').count()).toBe(0);
  expect(await list.getByRole('listitem').count()).toBe(20);
  await list.getByText('Older note 25', { exact: true }).waitFor({ state: 'detached' });
  await page.getByTestId('site-notes-older').scrollIntoViewIfNeeded();
  await screenshot(page, 'site-notes-older-phone');
  await page.getByTestId('site-notes-older').click();
  await list.getByText('Older note 25', { exact: true }).waitFor();
  await list.getByText('Older note 25', { exact: true }).scrollIntoViewIfNeeded();
  const count = await list.getByRole('listitem').count();
  const [[{ n }]] = (await session.t.sequelize.query(`SELECT count(*)::int AS n FROM notes WHERE target_type = 'site' AND target_id = :id`, { replacements: { id } })) as [{ n: number }[], unknown];
  expect(count).toBe(n);
  await page.getByTestId('site-notes-older').waitFor({ state: 'detached' });
  await screenshot(page, 'site-notes-read-only-phone');
  await context.close();
});
