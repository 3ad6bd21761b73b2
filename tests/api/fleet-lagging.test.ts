// Lagging sites against a hand-built fleet where the reason of every logger behind is
// known, the retry of failed installs, the version matrix (§2) and the overview's fleet counts (§7).
import semver from 'semver';
import { createHash } from 'node:crypto';
import { parse as parseCsv } from 'csv-parse/sync';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Activity, Site, SiteIntegrator, User } from '../../server/db/models';
import { createFleet, checkInBody, bearer, type Fleet } from './device-fixtures';
import { reached, setReported } from './fleet-fixtures';
import type { LaggingSite } from '../../schemas/fleet';

// 23:30 UTC at midsummer: night in the Vale (about 52° N, 2° W), so a daylight window is closed there.
const now = new Date('2026-06-21T23:30:00Z');
const daysBefore = (d: number) => new Date(now.getTime() - d * 86_400_000);
let t: TestApp;
let a: Fleet;
let b: Fleet;
const logger: Record<string, { id: string; token: string; serial: string }> = {};
const site: Record<string, string> = {};
const release: Record<string, string> = {};
type Agent = Awaited<ReturnType<TestApp['signedIn']>>;
let support: Agent;

/** The reason each site's one lagging logger must show, and why (DEVICE_API.md rules). */
const expected: Record<string, string> = {
  silent: 'silent', // last check-in 3 days ago, far beyond 3 × 900 s
  lowSupply: 'low_supply', // 4.0 V below the model's 4.6 V update minimum (rule 5)
  boardA: 'board_not_supported', // 2.3.0 is for boards B and C (rule 2)
  daylight: 'outside_daylight_window', // 2.3.0 asks for the window; the site has coordinates and it is night (rule 5)
  failed: 'failed_awaiting_retry', // its 2.3.0 install failed with integrity (rule 6)
  steppingStone: 'needs_stepping_stone', // 2.0.3 is outside 2.3.0's upgrade-from >=2.1.0; 2.1.4 goes first (rule 4)
  offered: 'offered', // nothing holds it back: the next check-in is offered 2.3.0
  early: 'outside_share', // early channel, 3.0.0-beta.2 widening at 0 % (rule 3)
  stopped: 'release_not_live', // model B's 1.1.0 reached widening, then was stopped (rule 6)
};

beforeAll(async () => {
  t = await startTestApp({ now: () => now });
  a = await createFleet(t, { modelName: 'FL-2 field logger' });
  b = await createFleet(t, { modelName: 'FL-2 field logger, bench series' });
  const newSite = async (key: string, name: string, customer: string) => {
    const s = await Site.create({ name, customer, address: 'Aldmere Vale', latitude: null, longitude: null, timeZone: 'Europe/London', createdBy: null });
    site[key] = s.id;
  };
  site.daylight = a.site.id; // Aldmere Village Hall, with coordinates
  await newSite('silent', 'Aldmere Primary School', 'Aldmere Parish Council');
  await newSite('lowSupply', 'Coldbrook Dairy', 'Coldbrook Farms');
  await newSite('boardA', 'Vale Boat Club', 'Vale Boat Club');
  await newSite('failed', "Hobb's End Telecom Hut", 'Vale Telecom Trust');
  await newSite('steppingStone', 'Marsh Lane Pump House', 'Vale Irrigation Group');
  await newSite('offered', 'Upper Aldmere Hall', 'Aldmere Parish Council');
  await newSite('early', 'Fernhollow Workshop', 'Fernhollow Energy Co-op');
  await newSite('stopped', 'Brackenford Mill', 'Vale Irrigation Group');
  await newSite('current', 'Kettle Green Pump House', 'Vale Irrigation Group');

  release.r214 = (await a.release({ version: '2.1.4', state: 'complete' })).id;
  release.r230 = (await a.release({ version: '2.3.0', state: 'widening', share: 100, boards: ['B', 'C'], upgradeFrom: '>=2.1.0' })).id;
  release.r300 = (await a.release({ version: '3.0.0-beta.2', state: 'widening', share: 0 })).id;
  release.r110 = (await b.release({ version: '1.1.0', state: 'stopped' })).id;
  await reached(t, release.r214, 'complete', daysBefore(20));
  await reached(t, release.r230, 'widening', daysBefore(5), { share: 100, daylightWindow: true });
  await reached(t, release.r300, 'widening', daysBefore(2), { channel: 'early', share: 0 });
  await reached(t, release.r110, 'stopped', daysBefore(8));

  const healthy = { firmware: '2.1.4', lastSeenAgoS: 300, supplyV: 5.1, tempC: 21 };
  const add = async (key: string, fleet: Fleet, siteKey: string, state: Parameters<typeof setReported>[3], channel: 'stable' | 'early' = 'stable') => {
    const l = await fleet.logger({ siteId: site[siteKey], board: state.board ?? 'B', channel });
    logger[key] = l;
    await setReported(t, l.id, now, { ...state, channel });
  };
  await add('silent', a, 'silent', { ...healthy, lastSeenAgoS: 3 * 86_400 });
  await add('lowSupply', a, 'lowSupply', { ...healthy, supplyV: 4.0 });
  await add('boardA', a, 'boardA', { ...healthy, board: 'A' });
  await add('daylight', a, 'daylight', healthy);
  await add('failed', a, 'failed', healthy);
  await add('steppingStone', a, 'steppingStone', { ...healthy, firmware: '2.0.3' });
  await add('offered', a, 'offered', healthy);
  await add('early', a, 'early', { ...healthy, firmware: '3.0.0-beta.1' }, 'early');
  await add('stopped', b, 'stopped', { ...healthy, firmware: '1.0.0' });
  // Up to date: at the "offered" site (so it counts 1 behind of 2), and a site with nobody behind.
  await add('current1', a, 'offered', { ...healthy, firmware: '2.3.0' });
  await add('current2', a, 'current', { ...healthy, firmware: '2.3.0' });
  await add('current3', a, 'current', { ...healthy, firmware: '2.3.0', board: 'C' });

  await t.sequelize.query(
    `INSERT INTO install_reports (logger_id, release_id, state, reason, offered_at, updated_at, finished_at)
     VALUES (:l, :r, 'failed', 'integrity', :at, :at, :at)`,
    { replacements: { l: logger.failed.id, r: release.r230, at: daysBefore(1) } },
  );
  // Installs of 2.3.0 confirmed 4 days and 2 days ago, for the adoption chart.
  const installed = (key: string, at: Date) =>
    t.sequelize.query(
      `INSERT INTO install_reports (logger_id, release_id, state, offered_at, updated_at, finished_at, confirmed_at) VALUES (:l, :r, 'installed', :at, :at, :at, :at)`,
      { replacements: { l: logger[key].id, r: release.r230, at } },
    );
  await installed('current1', daysBefore(4));
  await installed('current2', daysBefore(4));
  await installed('current3', daysBefore(2));
  support = await t.signedIn('support', 'Lena Support');
});
afterAll(() => t.close());

async function lagging(query: Record<string, string | number> = {}): Promise<{ rows: LaggingSite[]; total: number }> {
  const res = await support.get('/api/fleet/lagging-sites').query({ pageSize: 100, ...query });
  expect(res.status).toBe(200);
  return res.body;
}

describe('lagging sites', () => {
  test('when support opens lagging sites, then each site with a logger behind is listed once, with the reason the rules give for it', async () => {
    const { rows, total } = await lagging();
    expect(total).toBe(Object.keys(expected).length);
    for (const [key, reason] of Object.entries(expected)) {
      const row = rows.find((r) => r.siteId === site[key])!;
      expect(row.loggers.map((l) => [l.id, l.reason])).toEqual([[logger[key].id, reason]]);
      expect(row.reasons).toEqual({ [reason]: 1 });
      expect(row.loggers[0].reasonLabel.length).toBeGreaterThan(0);
    }
    expect(rows.some((r) => r.siteId === site.current)).toBe(false);
  });

  test('when a site has loggers behind and up to date, then behind / total, oldest version, lagging since and last contact are its own', async () => {
    const { rows } = await lagging();
    const offered = rows.find((r) => r.siteId === site.offered)!;
    expect(offered).toMatchObject({ behind: 1, total: 2, oldestVersion: '2.1.4', laggingSince: daysBefore(5).toISOString() });
    expect(offered.lastContactAt).toBe(new Date(now.getTime() - 300_000).toISOString());
    expect(rows.find((r) => r.siteId === site.stopped)!.laggingSince).toBe(daysBefore(8).toISOString());
    expect(rows.find((r) => r.siteId === site.early)!.laggingSince).toBe(daysBefore(2).toISOString());
    expect(rows.find((r) => r.siteId === site.steppingStone)!.oldestVersion).toBe('2.0.3');
  });

  test('when sorted by how long lagging or by count, both ways, then the order follows those values', async () => {
    const bySince = (await lagging({ sort: 'lagging_since' })).rows.map((r) => Date.parse(r.laggingSince));
    expect(bySince).toEqual([...bySince].sort((x, y) => x - y));
    expect(bySince[0]).toBe(daysBefore(8).getTime()); // the stopped release has waited longest
    const bySinceDesc = (await lagging({ sort: 'lagging_since', dir: 'desc' })).rows.map((r) => Date.parse(r.laggingSince));
    expect(bySinceDesc).toEqual([...bySinceDesc].sort((x, y) => y - x));
    const byBehind = (await lagging({ sort: 'behind' })).rows.map((r) => r.behind);
    expect(byBehind).toEqual([...byBehind].sort((x, y) => y - x));
    const bad = await support.get('/api/fleet/lagging-sites').query({ sort: 'behind; DROP TABLE sites' });
    expect(bad.status).toBe(400);
    expect(bad.body.errors[0].path).toBe('sort');
  });

  test('when a lagging site is renamed, then the list shows the new name at once and orders it by that name among sites with as many loggers behind', async () => {
    const before = (await lagging({ sort: 'behind' })).rows;
    const tied = before.filter((r) => r.behind === before[before.length - 1].behind);
    expect(tied.length).toBeGreaterThan(1);
    const moved = tied[tied.length - 1];
    // "Ab…" sorts before every other site name here ("Al…", "Br…", …) in any collation's order of letters.
    await Site.update({ name: 'Abbey Culvert Hut' }, { where: { id: moved.siteId } });
    try {
      const after = (await lagging({ sort: 'behind' })).rows;
      const group = after.filter((r) => r.behind === moved.behind);
      expect(group[0]).toMatchObject({ siteId: moved.siteId, siteName: 'Abbey Culvert Hut' });
      expect(after.map((r) => r.siteId).sort()).toEqual(before.map((r) => r.siteId).sort());
    } finally {
      await Site.update({ name: moved.siteName }, { where: { id: moved.siteId } });
    }
    const restored = (await lagging({ sort: 'behind' })).rows;
    expect(restored.map((r) => [r.siteId, r.siteName])).toEqual(before.map((r) => [r.siteId, r.siteName]));
  });

  test('when filtered by reason or customer, then only sites with that reason or customer are listed', async () => {
    for (const [key, reason] of Object.entries(expected)) {
      const { rows } = await lagging({ reason });
      expect(rows.map((r) => r.siteId)).toEqual([site[key]]);
      // The filter picks sites; each listed site still shows every logger behind there, whatever its reason.
      expect(rows[0].loggers).toHaveLength(rows[0].behind);
    }
    const parish = await lagging({ customer: 'parish council' }); // Aldmere Village Hall is the parish council's too
    expect(parish.rows.map((r) => r.siteId).sort()).toEqual([site.silent, site.offered, site.daylight].sort());
    expect(parish.rows.every((r) => r.customer === 'Aldmere Parish Council')).toBe(true);
    const one = await lagging({ siteId: site.failed });
    expect(one.rows.map((r) => r.siteId)).toEqual([site.failed]);
    expect((await lagging({ siteId: site.current })).total).toBe(0);
    const both = await lagging({ customer: 'parish', reason: 'silent' });
    expect(both.rows.map((r) => r.siteId)).toEqual([site.silent]);
    const bad = await support.get('/api/fleet/lagging-sites').query({ reason: "silent' OR 1=1 --" });
    expect(bad.status).toBe(400);
    expect(bad.body.errors[0].path).toBe('reason');
    expect((await lagging({ customer: "' OR 1=1 --" })).total).toBe(0);
  });

  test('when support exports lagging sites, then one CSV record per logger behind, quoted per RFC 4180, as an attachment', async () => {
    const res = await support.get('/api/fleet/lagging-sites/export.csv');
    expect(res.status).toBe(200);
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="heliodor-lagging-sites-.*\.csv"$/);
    const records = parseCsv(res.text, { columns: true }) as Record<string, string>[];
    const { rows } = await lagging();
    expect(records).toHaveLength(rows.reduce((n, r) => n + r.behind, 0));
    expect(records.find((r) => r.serial === logger.failed.serial)).toMatchObject({ site: "Hobb's End Telecom Hut", reason: 'failed_awaiting_retry', target_version: '2.3.0' });
    const filtered = parseCsv((await support.get('/api/fleet/lagging-sites/export.csv').query({ reason: 'low_supply' })).text, { columns: true });
    expect(filtered).toHaveLength(1);
  });
});

describe('lagging sites for an integrator', () => {
  // PRODUCT.md roles: an integrator reads their sites' loggers — so of lagging sites, only the sites
  // assigned to them, in the list, its CSV and a lagging site's own page (which reads the list by siteId).
  let tomasz: Agent;
  const assigned = () => [site.silent, site.offered].sort();
  beforeAll(async () => {
    tomasz = await t.signedIn('integrator', 'Tomasz Integrator');
    await t.signedIn('integrator', 'Ade Integrator');
    const [me, other] = await Promise.all([User.findOne({ where: { name: 'Tomasz Integrator' } }), User.findOne({ where: { name: 'Ade Integrator' } })]);
    await SiteIntegrator.bulkCreate([
      { siteId: site.silent, userId: me!.id },
      { siteId: site.offered, userId: me!.id },
      { siteId: site.failed, userId: other!.id },
    ]);
  });

  test('when an integrator opens lagging sites, then only the lagging sites assigned to them are listed and counted', async () => {
    const res = await tomasz.get('/api/fleet/lagging-sites').query({ pageSize: 100 });
    expect(res.status).toBe(200);
    expect(res.body.rows.map((r: LaggingSite) => r.siteId).sort()).toEqual(assigned());
    expect(res.body.total).toBe(2);
    // Every other lagging site is still there for support, so the scope (not the fleet) made the difference.
    expect((await lagging()).total).toBe(Object.keys(expected).length);
  });

  test('when an integrator filters by reason or asks for a site not assigned to them, then nothing of another site comes back', async () => {
    const failed = await tomasz.get('/api/fleet/lagging-sites').query({ reason: 'failed_awaiting_retry' });
    expect(failed.body).toMatchObject({ rows: [], total: 0 });
    const other = await tomasz.get('/api/fleet/lagging-sites').query({ siteId: site.failed });
    expect(other.body).toMatchObject({ rows: [], total: 0 });
    const own = await tomasz.get('/api/fleet/lagging-sites').query({ siteId: site.silent });
    expect(own.body.rows.map((r: LaggingSite) => [r.siteId, r.loggers.map((l) => l.reason)])).toEqual([[site.silent, ['silent']]]);
  });

  test('when an integrator exports lagging sites, then the CSV holds only the loggers behind at their sites', async () => {
    const res = await tomasz.get('/api/fleet/lagging-sites/export.csv');
    expect(res.status).toBe(200);
    const records = parseCsv(res.text, { columns: true }) as Record<string, string>[];
    expect(records.map((r) => r.serial).sort()).toEqual([logger.silent.serial, logger.offered.serial].sort());
  });

  test('when an integrator opens the version matrix, then it counts only the loggers they may read', async () => {
    const model = (await tomasz.get('/api/fleet/versions')).body.models.find((m: { modelId: string }) => m.modelId === a.model.id);
    // Their two sites hold one logger behind each (2.1.4) and one up to date at "offered" (2.3.0).
    expect(model.versions).toEqual([
      { firmware: '2.3.0', total: 1, byBoard: { B: 1 } },
      { firmware: '2.1.4', total: 2, byBoard: { B: 2 } },
    ]);
    expect(model.channels.find((c: { channel: string }) => c.channel === 'stable')).toMatchObject({ loggers: 3, onCurrent: 1 });
    const adoption = model.releases.find((r: { id: string }) => r.id === release.r230).adoption;
    expect(adoption[adoption.length - 1].cumulative).toBe(1);
  });

  test('when each role reads a lagging site, then can says who retries its failed installs and who adds a note', async () => {
    const canOf = async (agent: Agent) => (await agent.get('/api/fleet/lagging-sites').query({ siteId: site.silent })).body.rows[0].can;
    const priya = await t.signedIn('release_engineer', 'Priya Engineer');
    expect(await canOf(support)).toEqual({ retry: false, addNote: true });
    expect(await canOf(priya)).toEqual({ retry: true, addNote: true });
    expect(await canOf(tomasz)).toEqual({ retry: false, addNote: false });
  });
});

describe('why no update', () => {
  test('when support asks why a 2.0.x logger gets no 2.3.0, then every release of the model has a verdict, and 2.1.4 is the stepping stone', async () => {
    const res = await support.get(`/api/loggers/${logger.steppingStone.id}/why`);
    expect(res.status).toBe(200);
    const verdict = (id: string) => res.body.verdicts.find((v: { releaseId: string }) => v.releaseId === id);
    expect(verdict(release.r230).reason).toBe('needs_stepping_stone');
    expect(verdict(release.r214).reason).toBe('stepping_stone');
    expect(verdict(release.r300).reason).toBe('wrong_channel');
    expect(res.body.offer).toEqual({ releaseId: release.r214, version: '2.1.4' });
  });

  test('when support asks about the early logger, then the verdict names, in plain words, the share that will include its bucket computed by the SHA-256 formula (DEVICE_API.md rule 3)', async () => {
    const res = await support.get(`/api/loggers/${logger.early.id}/why`);
    const bucket = createHash('sha256').update(`${logger.early.id}:${release.r300}`).digest().readUInt32BE(0) % 10_000;
    const verdict = res.body.verdicts.find((v: { releaseId: string }) => v.releaseId === release.r300);
    expect(verdict.reason).toBe('outside_share');
    expect(verdict.detail).toContain(`once the share reaches ${Math.floor(bucket / 100) + 1} %`);
    expect(verdict.detail).toContain(`place ${bucket} of 10 000`);
  });
});

describe('retrying failed installs', () => {
  test('when support asks for a retry, then 403; when the body names neither loggers nor a site, then 400', async () => {
    expect((await support.post(`/api/releases/${release.r230}/retry`).set(csrf).send({ siteId: site.failed })).status).toBe(403);
    const priya = await t.signedIn('release_engineer', 'Priya Engineer');
    expect((await priya.post(`/api/releases/${release.r230}/retry`).set(csrf).send({})).status).toBe(400);
    expect((await priya.post(`/api/releases/${release.r230}/retry`).set(csrf).send({ loggerIds: [] })).status).toBe(400);
  });

  test('when a release engineer retries a site, then its failed install is cleared once, the site lags for "offered", and the next check-in is offered the release', async () => {
    const priya = await t.signedIn('release_engineer', 'Priya Engineer');
    // The lagging logger names the release it lacks, so retry acts on that release and no other of the same version.
    const failedLogger = (await lagging({ siteId: site.failed })).rows[0].loggers[0];
    expect(failedLogger).toMatchObject({ id: logger.failed.id, targetReleaseId: release.r230, targetVersion: '2.3.0' });
    const first = await priya.post(`/api/releases/${failedLogger.targetReleaseId}/retry`).set(csrf).send({ siteId: site.failed });
    expect(first.status).toBe(200);
    expect(first.body).toEqual({ retried: 1 });
    const again = await priya.post(`/api/releases/${release.r230}/retry`).set(csrf).send({ loggerIds: [logger.failed.id] });
    expect(again.body).toEqual({ retried: 0 });
    expect(await Activity.count({ where: { action: 'release.retried', targetId: release.r230 } })).toBe(2);

    const row = (await lagging({ reason: 'offered' })).rows.find((r) => r.siteId === site.failed)!;
    expect(row.loggers[0].reason).toBe('offered');

    const checkIn = await t.request().post('/api/device/v1/check-in').set(bearer(logger.failed.token)).send(checkInBody('2.1.4'));
    expect(checkIn.status).toBe(200);
    expect(checkIn.body.offer?.release).toBe(release.r230);
  });
});

describe('version matrix', () => {
  test('when support opens the version matrix, then counts per version × board, the share on the current release and adoption per day are the fleet’s', async () => {
    const res = await support.get('/api/fleet/versions');
    expect(res.status).toBe(200);
    const model = res.body.models.find((m: { modelId: string }) => m.modelId === a.model.id);
    const v = (fw: string) => model.versions.find((x: { firmware: string }) => x.firmware === fw);
    expect(v('2.3.0')).toEqual({ firmware: '2.3.0', total: 3, byBoard: { B: 2, C: 1 } });
    expect(v('2.1.4').byBoard).toEqual({ A: 1, B: 5 });
    // Newest first by semantic-version precedence (semver.org §11), as the semver package sorts them.
    const listed = model.versions.map((x: { firmware: string }) => x.firmware);
    expect(listed).toEqual(semver.rsort([...listed]));

    const stable = model.channels.find((x: { channel: string }) => x.channel === 'stable');
    expect(stable.currentRelease).toMatchObject({ id: release.r230, version: '2.3.0' });
    expect(stable).toMatchObject({ loggers: 10, onCurrent: 3 });
    expect(stable.share).toBeCloseTo(3 / 10, 10);
    const early = model.channels.find((x: { channel: string }) => x.channel === 'early');
    expect(early).toMatchObject({ loggers: 1, onCurrent: 0, share: 0 });

    const adoption = model.releases.find((r: { id: string }) => r.id === release.r230).adoption;
    expect(adoption.map((d: { day: string }) => d.day)).toEqual(['2026-06-16', '2026-06-17', '2026-06-18', '2026-06-19', '2026-06-20', '2026-06-21']);
    expect(adoption.map((d: { installed: number }) => d.installed)).toEqual([0, 2, 0, 1, 0, 0]);
    expect(adoption.map((d: { cumulative: number }) => d.cumulative)).toEqual([0, 2, 2, 3, 3, 3]);
  });
});

describe('overview', () => {
  test('when the overview is read, then it counts lagging sites, silent loggers and flags, and lists live releases, each with a link', async () => {
    const res = await support.get('/api/overview');
    expect(res.status).toBe(200);
    const { rows } = await lagging();
    // The lagging summary is caught up by the request itself on a quiet fleet: as of the request's clock.
    expect(res.body.fleet.laggingSites).toEqual({ count: rows.length, href: '/lagging', asOf: now.toISOString(), ageS: 0 });
    expect(res.body.fleet.silent).toEqual({ count: 1, href: '/loggers?flag=silent' });
    expect(res.body.fleet.flags.find((f: { flag: string }) => f.flag === 'low_supply')).toEqual({ flag: 'low_supply', count: 1, href: '/loggers?flag=low_supply' });
    const live = res.body.fleet.liveReleases.map((r: { id: string }) => r.id).sort();
    expect(live).toEqual([release.r214, release.r230, release.r300].sort());
    expect(res.body.fleet.liveReleases.find((r: { id: string }) => r.id === release.r230)).toMatchObject({ installed: 3, failed: 1, href: `/releases/${release.r230}` });
  });

  test('when an integrator reads the overview, then it carries no recent activity (they may not read the log), while support gets it', async () => {
    const tomasz = await t.signedIn('integrator', 'Tomasz Integrator');
    expect((await tomasz.get('/api/activity')).status).toBe(403);
    const theirs = await tomasz.get('/api/overview');
    expect(theirs.status).toBe(200);
    expect(theirs.body.recentActivity).toBeNull();
    // Each figure counts what its link opens for them: their lagging sites, their loggers, their sites.
    const theirLagging = await tomasz.get('/api/fleet/lagging-sites');
    expect(theirs.body.fleet.laggingSites.count).toBe(theirLagging.body.total);
    expect(theirLagging.body.total).toBe(2);
    expect(theirs.body.loggers.total).toBe((await tomasz.get('/api/loggers')).body.total);
    expect(theirs.body.sites).toBe((await tomasz.get('/api/sites')).body.total);
    expect(theirs.body.loggers.total).toBeLessThan((await support.get('/api/overview')).body.loggers.total);
    const supports = await support.get('/api/overview');
    expect(Array.isArray(supports.body.recentActivity)).toBe(true);
  });
});
