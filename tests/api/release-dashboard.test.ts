// The release dashboard against a hand-built rollout where every report, board, site and
// install time is known: the per-board and per-site breakdown, the time to install, the trip points
// with their current values, adoption per day, paging, and who sees which sites.
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Site, SiteIntegrator, User } from '../../server/db/models';
import { createFleet, type Fleet } from './device-fixtures';
import { reached, setReported } from './fleet-fixtures';
import type { ReleaseDashboard, ReleaseSiteRow } from '../../schemas/releases';

const now = new Date('2026-06-21T12:00:00Z');
const minutesBefore = (m: number) => new Date(now.getTime() - m * 60_000);
let t: TestApp;
let a: Fleet;
let releaseId: string;
const site: Record<string, string> = {};
type Agent = Awaited<ReturnType<TestApp['signedIn']>>;
let support: Agent;

/**
 * Install times in seconds from the first offer to the confirmed install. Chosen so the percentiles
 * can be worked by hand with the continuous definition PostgreSQL documents for percentile_cont
 * ("interpolating between adjacent input items"), Hyndman & Fan (1996) definition 7:
 * sorted 600, 1200, 1800, 7200 → median (1200 + 1800) / 2 = 1500;
 * 90th percentile at rank 0.9 × (4 − 1) = 2.7 → 1800 + 0.7 × (7200 − 1800) = 5580.
 */
const installTimesS = [1800, 600, 7200, 1200];

type Report = { state: string; reason?: string; offeredMinAgo: number; doneMinAgo?: number; confirmed?: boolean };

async function report(loggerId: string, r: Report) {
  await t.sequelize.query(
    `INSERT INTO install_reports (logger_id, release_id, state, reason, offered_at, updated_at, finished_at, confirmed_at)
     VALUES (:loggerId, :releaseId, :state, :reason, :offered, :updated, :finished, :confirmed)`,
    {
      replacements: {
        loggerId,
        releaseId,
        state: r.state,
        reason: r.reason ?? null,
        offered: minutesBefore(r.offeredMinAgo),
        updated: minutesBefore(r.doneMinAgo ?? 1),
        finished: r.doneMinAgo === undefined ? null : minutesBefore(r.doneMinAgo),
        confirmed: r.confirmed && r.doneMinAgo !== undefined ? minutesBefore(r.doneMinAgo) : null,
      },
    },
  );
}

beforeAll(async () => {
  t = await startTestApp({ now: () => now });
  a = await createFleet(t, { modelName: 'FL-2 field logger' });
  const newSite = async (key: string, name: string, customer: string) => {
    site[key] = (await Site.create({ name, customer, address: 'Aldmere Vale', latitude: null, longitude: null, timeZone: 'Europe/London', createdBy: null })).id;
  };
  await newSite('mill', 'Brackenford Mill', 'Vale Irrigation Group');
  await newSite('dairy', 'Coldbrook Dairy', 'Coldbrook Farms');
  await newSite('hall', 'Upper Aldmere Hall', 'Aldmere Parish Council');

  releaseId = (await a.release({ version: '2.3.0', state: 'widening', share: 50, boards: ['B', 'C'], tripMinReports: 5, tripFailureRatio: 0.25 })).id;
  await reached(t, releaseId, 'widening', new Date('2026-06-19T08:00:00Z'));

  const logger = async (siteKey: string, board: string, firmware = '2.2.0', channel: 'stable' | 'early' = 'stable') => {
    const l = await a.logger({ siteId: site[siteKey], board, channel });
    await setReported(t, l.id, now, { firmware, lastSeenAgoS: 300, supplyV: 5.1, tempC: 21, channel });
    return l.id;
  };
  // Brackenford Mill: four installs on board B with the four install times, two confirmed on 20 June.
  const done = [60 * 24 + 30, 60 * 24 + 10, 45, 20]; // minutes before now: 20 June 11:30, 11:50; 21 June 11:15, 11:40
  for (const [i, s] of installTimesS.entries()) {
    const id = await logger('mill', 'B', '2.3.0');
    await report(id, { state: 'installed', offeredMinAgo: done[i] + s / 60, doneMinAgo: done[i], confirmed: i !== 3 });
  }
  // Coldbrook Dairy: a failed install for integrity and one for connection (transient), one downloading, on board C.
  await report(await logger('dairy', 'C'), { state: 'failed', reason: 'integrity', offeredMinAgo: 200, doneMinAgo: 100 });
  await report(await logger('dairy', 'C'), { state: 'failed', reason: 'connection', offeredMinAgo: 200, doneMinAgo: 90 });
  await report(await logger('dairy', 'C'), { state: 'downloading', offeredMinAgo: 30 });
  // Upper Aldmere Hall: board A (not targeted) and one B logger not offered yet; an early-channel logger is not in the audience.
  await logger('hall', 'A');
  await logger('hall', 'B');
  await logger('hall', 'B', '3.0.0-beta.1', 'early');
  support = await t.signedIn('support', 'Lena Support');
});
afterAll(() => t.close());

async function dashboard(agent: Agent = support): Promise<ReleaseDashboard> {
  const res = await agent.get(`/api/releases/${releaseId}/dashboard`);
  expect(res.status).toBe(200);
  return res.body;
}

describe('release dashboard', () => {
  test('when support opens the dashboard, then each board of the model has its audience, reach and outcome, and board A is shown as not targeted', async () => {
    const d = await dashboard();
    expect(d.byBoard.map((b) => b.board)).toEqual(['A', 'B', 'C']);
    const board = Object.fromEntries(d.byBoard.map((b) => [b.board, b]));
    expect(board.A).toMatchObject({ targeted: false, loggers: 1, onRelease: 0, reached: 0, installed: 0, failed: 0, medianInstallS: null });
    expect(board.B).toMatchObject({ targeted: true, loggers: 5, onRelease: 4, reached: 4, inProgress: 0, installed: 4, failed: 0, medianInstallS: 1500 });
    expect(board.C).toMatchObject({ targeted: true, loggers: 3, onRelease: 0, reached: 3, inProgress: 1, installed: 0, failed: 2 });
  });

  test('when the dashboard is read, then the time to install is the median and 90th percentile of the worked example', async () => {
    const d = await dashboard();
    expect(d.timeToInstall).toEqual({ installs: 4, medianS: 1500, p90S: 5580 });
  });

  test('when sites are listed, then failures come first, then installs in progress, then reach', async () => {
    const d = await dashboard();
    expect(d.bySite.total).toBe(3);
    expect(d.bySite.rows.map((s) => s.siteName)).toEqual(['Coldbrook Dairy', 'Brackenford Mill', 'Upper Aldmere Hall']);
    expect(d.bySite.rows[0]).toMatchObject({ customer: 'Coldbrook Farms', loggers: 3, reached: 3, inProgress: 1, failed: 2, installed: 0 });
    expect(d.bySite.rows[1]).toMatchObject({ loggers: 4, onRelease: 4, installed: 4, medianInstallS: 1500 });
    expect(d.bySite.rows[2]).toMatchObject({ loggers: 2, reached: 0 });
  });

  test('when sites are paged, then each site appears once and the total stays; bad paging is refused with the field', async () => {
    const seen: ReleaseSiteRow[] = [];
    for (let page = 1; page <= 3; page++) {
      const res = await support.get(`/api/releases/${releaseId}/sites`).query({ page, pageSize: 1 });
      expect(res.status).toBe(200);
      expect(res.body.total).toBe(3);
      seen.push(...res.body.rows);
    }
    expect(seen.map((s) => s.siteId)).toEqual([site.dairy, site.mill, site.hall]);
    const past = await support.get(`/api/releases/${releaseId}/sites`).query({ page: 9, pageSize: 1 });
    expect(past.body).toEqual({ rows: [], total: 3 });
    for (const [query, path] of [
      [{ pageSize: 101 }, 'pageSize'],
      [{ page: 0 }, 'page'],
      [{ page: "1; DROP TABLE sites" }, 'page'],
    ] as const) {
      const bad = await support.get(`/api/releases/${releaseId}/sites`).query(query);
      expect(bad.status).toBe(400);
      expect(bad.headers['content-type']).toMatch(/^application\/problem\+json/);
      expect(bad.body.errors[0].path).toBe(path);
    }
  });

  test('when the trip points are read, then the failure ratio counts failures the stop counts (connection is transient) over finished installs', async () => {
    const d = await dashboard();
    // 1 counted failure (integrity) of 5 finished (4 installed + 1): 20 %, below 25 %, judged from 5 finished.
    expect(d.trip.failureRatio).toMatchObject({ installed: 4, failed: 1, finished: 5, ratio: 0.2, threshold: 0.25, minReports: 5, judged: true, over: false });
    // Fewer than 20 loggers a full day on the release: the reset rate is not judged yet.
    expect(d.trip.resetRate).toMatchObject({ loggers: 0, minLoggers: 20, judged: false, over: false, threshold: 2 });
  });

  test('when one more counted failure comes in, then the dashboard shows the ratio over the threshold, as the trip decides', async () => {
    const extra = await a.logger({ siteId: site.hall, board: 'B' });
    await setReported(t, extra.id, now, { firmware: '2.2.0', lastSeenAgoS: 300 });
    await report(extra.id, { state: 'failed', reason: 'storage', offeredMinAgo: 50, doneMinAgo: 5 });
    const d = await dashboard();
    // 2 of 6 = 33.3 % > 25 %.
    expect(d.trip.failureRatio).toMatchObject({ failed: 2, finished: 6, judged: true, over: true });
    expect(d.trip.failureRatio.ratio).toBeCloseTo(2 / 6, 10);
    expect(d.bySite.rows.map((s) => s.siteName)).toEqual(['Coldbrook Dairy', 'Upper Aldmere Hall', 'Brackenford Mill']);
    await t.sequelize.query('DELETE FROM install_reports WHERE logger_id = :id', { replacements: { id: extra.id } });
    await t.sequelize.query(`UPDATE loggers SET status = 'retired', site_id = NULL WHERE id = :id`, { replacements: { id: extra.id } });
  });

  test('when adoption is read, then each UTC day since the release started has its installs and the running total', async () => {
    const d = await dashboard();
    expect(d.adoption).toEqual([
      { day: '2026-06-19', installed: 0, cumulative: 0 },
      { day: '2026-06-20', installed: 2, cumulative: 2 },
      { day: '2026-06-21', installed: 2, cumulative: 4 },
    ]);
  });

  test('when an integrator reads the dashboard, then boards and sites count only loggers at their sites', async () => {
    const integrator = await t.signedIn('integrator', 'Tom Integrator');
    const user = await User.findOne({ where: { name: 'Tom Integrator' } });
    await SiteIntegrator.create({ siteId: site.dairy, userId: user!.id });
    const d = await dashboard(integrator);
    expect(d.bySite.rows.map((s) => s.siteId)).toEqual([site.dairy]);
    expect(d.byBoard.find((b) => b.board === 'B')).toMatchObject({ loggers: 0 });
    expect(d.byBoard.find((b) => b.board === 'C')).toMatchObject({ loggers: 3, failed: 2 });
  });

  test('when the release does not exist or the id is not a UUID, then 404 and 400 as problem details', async () => {
    const missing = await support.get('/api/releases/00000000-0000-4000-8000-000000000000/dashboard');
    expect(missing.status).toBe(404);
    expect(missing.headers['content-type']).toMatch(/^application\/problem\+json/);
    const bad = await support.get("/api/releases/1' OR '1'='1/dashboard");
    expect(bad.status).toBe(400);
    expect(bad.body.errors[0].path).toBe('id');
  });

  test('when nobody is signed in, then the dashboard is refused', async () => {
    expect((await t.request().get(`/api/releases/${releaseId}/dashboard`).set(csrf)).status).toBe(401);
  });
});
