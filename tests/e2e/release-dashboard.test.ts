// The rollout dashboard in the browser, at phone and wide sizes, on the full demo scenario's
// live 2.3.0 release: a release engineer reads the trip points with their current values, the time
// to install, each board revision and the sites (failures first) as the API answers them; the page
// refreshes itself while the release is live (a report written straight into install_reports shows up
// without a reload); the site list pages; a site row opens the site. Expected figures come from the API
// at run time (the seed decides the rollout), so the checks say "the screen shows what the server knows".
import type { Page } from 'playwright-core';
import { testPassword, type TestApp } from '../helpers/app';
import { browserApp, screenshot, signIn, viewports } from '../helpers/browser';
import { duration } from '../../components/format';
import type { ReleaseDashboard, ReleaseSiteRow } from '../../schemas/releases';

const session = browserApp({ seed: 'demo', seedSize: 'full' });
const engineerEmail = 'priya@fernhollow.example'; // the demo scenario's release engineer (server/db/seed/scenario.ts)
type Agent = ReturnType<TestApp['agent']>;
type ReleaseRow = { id: string; modelId: string; version: string; state: string };

let engineer: Agent;
let release: ReleaseRow;

/** A percentage as the stop card writes it: one decimal at most, trailing zero dropped ("1.8 %", "5 %"). */
const pct = (x: number) => `${Number((x * 100).toFixed(1))} %`;

async function apiGet<T>(path: string): Promise<T> {
  const res = await engineer.get(path);
  expect(res.status).toBe(200);
  return res.body as T;
}

const dashboard = () => apiGet<ReleaseDashboard>(`/api/releases/${release.id}/dashboard`);

beforeAll(async () => {
  engineer = session.t.agent();
  expect((await engineer.post('/api/auth/sign-in').send({ email: engineerEmail, password: testPassword })).status).toBe(200);
  // The live release with the most install reports: the scenario's widening stable release.
  const { rows } = await apiGet<{ rows: (ReleaseRow & { installed: number; failed: number })[] }>('/api/releases?state=widening');
  const live = rows.filter((r) => r.installed + r.failed > 0).sort((a, b) => b.installed + b.failed - (a.installed + a.failed));
  expect(live.length).toBeGreaterThan(0);
  release = live[0];
});

/** Signs in as the release engineer and opens the release's page, waiting for the dashboard. */
async function openRelease(page: Page) {
  await signIn(page, session.base, engineerEmail, testPassword);
  await page.getByRole('heading', { name: 'Overview' }).waitFor();
  await page.goto(`${session.base}/releases/${release.id}`);
  await page.getByTestId('release-dashboard').waitFor();
}

/** Scrolls a section to the top of the app's scrolling container and takes the viewport's picture. */
async function shoot(page: Page, testId: string, name: string) {
  await page.getByTestId(testId).evaluate((el) => el.scrollIntoView({ block: 'start' }));
  await page.waitForTimeout(150);
  await screenshot(page, name);
}

function collectErrors(page: Page) {
  const errors: string[] = [];
  page.on('pageerror', (e) => errors.push(e.message));
  return errors;
}

const siteNames = (page: Page) => page.getByTestId('release-site').evaluateAll((els) => els.map((e) => (e as HTMLElement).innerText.split('\n')[0].trim()));

// The dashboard is the release engineer's desk view; the accessibility pass opens it at phone size too.
describe.each(Object.entries(viewports).filter(([size]) => size === 'wide'))('release dashboard at %s size', (size, viewport) => {
  test('when a release engineer opens a live release, then the stop gauge, boards, first site and median install time are the API’s figures', async () => {
    const context = await session.browser.newContext({ viewport });
    const page = await context.newPage();
    const errors = collectErrors(page);
    await openRelease(page);
    const d = await dashboard();

    // Trip points now: "Failure ratio X % of Y %", with the counts the trip judges.
    const f = d.trip.failureRatio;
    expect(await page.getByTestId('failure-ratio').innerText()).toBe(`Failure ratio ${pct(f.ratio)} of ${pct(f.threshold)}`);
    expect(await page.getByTestId('trip-points').innerText()).toContain(`${f.failed} failed of ${f.finished} finished installs`);
    await page.getByText('Live · refreshes every 15 s').waitFor();

    // Time to install: the median is shown whenever the API has one.
    expect(d.timeToInstall.medianS).not.toBeNull();
    expect(await page.getByTestId('median-install').innerText()).toBe(duration(d.timeToInstall.medianS!));
    expect(await page.getByTestId('time-to-install').innerText()).toContain(`Median over ${d.timeToInstall.installs} install`);

    // One card per board revision of the model, each with the API's reach.
    const models = await apiGet<{ rows: { id: string; boards: { label: string }[] }[] }>('/api/models');
    const boards = models.rows.find((m) => m.id === release.modelId)!.boards.map((b) => b.label);
    expect(d.byBoard.map((b) => b.board)).toEqual(boards);
    expect(await page.getByTestId('by-board').locator('[data-testid^="board-"]').count()).toBe(boards.length);
    for (const b of d.byBoard) {
      const card = await page.getByTestId(`board-${b.board}`).innerText();
      expect(card).toContain(`Board ${b.board}`);
      expect(card).toContain(`${b.onRelease} of ${b.loggers} on this release or newer`);
      expect(card).toContain(`${b.failed} failed`);
      if (!b.targeted) expect(card).toContain('Not targeted');
    }

    // By site: failures first, as the API orders them; the first page shown whole.
    const shown = await siteNames(page);
    expect(shown[0]).toBe(d.bySite.rows[0].siteName);
    expect(shown).toEqual(d.bySite.rows.map((s) => s.siteName));

    // Adoption: the running total of confirmed installs on the last day.
    const last = d.adoption[d.adoption.length - 1];
    expect(await page.getByTestId('adoption').innerText()).toContain(`${last.cumulative} installed since ${d.adoption[0].day}`);

    await shoot(page, 'trip-points', `release-dashboard-trip-${size}`);
    await shoot(page, 'by-board', `release-dashboard-boards-${size}`);
    await shoot(page, 'by-site', `release-dashboard-sites-${size}`);
    await shoot(page, 'adoption', `release-dashboard-adoption-${size}`);
    expect(errors).toEqual([]);
    await context.close();
  });
});

test('when an install report arrives while the page is open, then the dashboard shows the new figures within one refresh, without a reload', async () => {
  const context = await session.browser.newContext({ viewport: viewports.phone });
  const page = await context.newPage();
  const errors = collectErrors(page);
  await openRelease(page);
  const before = (await dashboard()).trip.failureRatio;
  await page.getByTestId('trip-points').getByText(`${before.failed} failed of ${before.finished} finished installs`).waitFor();
  // A mark on the window: a reload would wipe it.
  await page.evaluate(() => ((window as unknown as { heliodorSameVisit: boolean }).heliodorSameVisit = true));

  // A logger of the release's audience (model, channel, targeted board) that has no report yet fails the
  // install for storage, a failure the stop counts (connection and low supply are retried instead).
  const [[logger]] = (await session.t.sequelize.query(
    `SELECT l.id FROM loggers l JOIN releases r ON r.id = :releaseId
      WHERE l.model_id = r.model_id AND l.channel = r.channel AND l.status = 'enrolled' AND l.board = ANY (r.boards)
        AND NOT EXISTS (SELECT 1 FROM install_reports ir WHERE ir.logger_id = l.id AND ir.release_id = r.id)
      ORDER BY l.serial LIMIT 1`,
    { replacements: { releaseId: release.id } },
  )) as [{ id: string }[], unknown];
  expect(logger).toBeDefined();
  const started = Date.now();
  await session.t.sequelize.query(
    `INSERT INTO install_reports (logger_id, release_id, state, reason, offered_at, updated_at, finished_at)
     VALUES (:loggerId, :releaseId, 'failed', 'storage', now() - interval '20 minutes', now(), now())`,
    { replacements: { loggerId: logger.id, releaseId: release.id } },
  );
  const after = (await dashboard()).trip.failureRatio;
  expect(after).toMatchObject({ failed: before.failed + 1, finished: before.finished + 1 });

  // The interval is 15 s (hooks/releases.ts LIVE_REFRESH_MS); 40 s leaves room for two refreshes and a slow machine.
  await page.getByTestId('trip-points').getByText(`${after.failed} failed of ${after.finished} finished installs`).waitFor({ timeout: 40_000 });
  expect(Date.now() - started).toBeLessThan(40_000);
  expect(await page.getByTestId('failure-ratio').innerText()).toBe(`Failure ratio ${pct(after.ratio)} of ${pct(after.threshold)}`);
  expect(await page.evaluate(() => (window as unknown as { heliodorSameVisit?: boolean }).heliodorSameVisit)).toBe(true);
  expect(errors).toEqual([]);
  await context.close();
});

test('when the release reaches more than ten sites and "Next" is pressed, then the second page starts with the API’s eleventh site', async () => {
  const context = await session.browser.newContext({ viewport: viewports.wide });
  const page = await context.newPage();
  const errors = collectErrors(page);
  await openRelease(page);
  const d = await dashboard();
  expect(d.bySite.total).toBeGreaterThan(10);
  const bySite = page.getByTestId('by-site');
  expect(await bySite.getByTestId('pager-range').innerText()).toBe(`1–10 of ${d.bySite.total}`);

  await bySite.getByRole('button', { name: 'Next' }).click();
  const second = await apiGet<{ rows: ReleaseSiteRow[]; total: number }>(`/api/releases/${release.id}/sites?page=2&pageSize=10`);
  await bySite.getByTestId('pager-range').getByText(`11–${Math.min(20, second.total)} of ${second.total}`).waitFor();
  let shown: string[] = [];
  for (let i = 0; i < 50 && shown[0] !== second.rows[0].siteName; i++) {
    shown = await siteNames(page);
    if (shown[0] !== second.rows[0].siteName) await page.waitForTimeout(200);
  }
  expect(shown[0]).toBe(second.rows[0].siteName);
  expect(shown).toEqual(second.rows.map((s) => s.siteName));
  await shoot(page, 'by-site', 'release-dashboard-sites-page-2-wide');
  expect(errors).toEqual([]);
  await context.close();
});

test('when a site row is pressed, then the site’s page opens', async () => {
  const context = await session.browser.newContext({ viewport: viewports.phone });
  const page = await context.newPage();
  await openRelease(page);
  const first = (await dashboard()).bySite.rows[0];
  await page.getByTestId('release-site').first().getByText(first.siteName, { exact: true }).waitFor();
  await page.getByTestId('release-site').first().click();
  await page.waitForURL(new RegExp(`/sites/${first.siteId}$`));
  await page.getByRole('heading', { name: first.siteName }).waitFor();
  await context.close();
});
