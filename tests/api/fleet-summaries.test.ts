// The fleet summaries (server/fleet/summaries.ts, migration 0014_summaries) against a full recomputation
// (tests/helpers/fleet-reference.ts: the scans the views ran before) while the fleet changes: check-ins
// that move firmware and report installs through the device API, a logger falling silent as the clock
// moves on, a release becoming current, a logger moving site. Counts must agree at every step before the
// worker folds them (the writes keep them in their own transaction) and after; the lagging reasons once
// the summary has caught up. The views' answers are checked against the scans too, for support and for an
// integrator (PRODUCT.md roles: an integrator reads their sites' loggers and the ones they registered).
import { startTestApp, type TestApp } from '../helpers/app';
import { SiteIntegrator, Site, User } from '../../server/db/models';
import { createFleet, checkInBody, bearer, CHECK_IN, type Fleet } from './device-fixtures';
import { reached, setReported } from './fleet-fixtures';
import * as reference from '../helpers/fleet-reference';
import { QueryTypes } from 'sequelize';
import { loggerScope } from '../../server/auth/policies';
import type { Actor } from '../../server/auth/actor';
import type { LaggingSite } from '../../schemas/fleet';

// Noon UTC at the March equinox: daylight in the Vale (about 52° N, 2° W), so no daylight window is shut.
let clock = new Date('2026-03-20T12:00:00Z');
const daysBefore = (d: number) => new Date(clock.getTime() - d * 86_400_000);
let t: TestApp;
let a: Fleet;
let support: Awaited<ReturnType<TestApp['signedIn']>>;
let tomasz: Awaited<ReturnType<TestApp['signedIn']>>;
let tomaszId: string;
const site: Record<string, string> = {};
const logger: Record<string, { id: string; token: string; serial: string }> = {};
const release: Record<string, string> = {};

async function expectCountsAgree() {
  const counts = await reference.loggerCounts(t.sequelize);
  expect(counts.perSite).toEqual(counts.scan);
  expect(counts.fleetWide).toEqual(counts.fleetScan);
  const reports = await reference.reportCounts(t.sequelize);
  expect(reports.summary).toEqual(reports.scan);
}

/** Counts agree before and after the worker folds them; the lagging summary agrees once caught up. */
async function expectSummariesAgree() {
  await expectCountsAgree();
  await t.app.services.summaries.tick();
  await expectCountsAgree();
  const lag = await reference.lagging(t.sequelize, clock);
  expect(lag.summary).toEqual(lag.scan);
  expect(lag.sitesSummary).toEqual(lag.sitesScan);
  expect(lag.reasonsSummary).toEqual(lag.reasonsScan);
  return lag;
}

/** The overview's figures for an agent against the scans within the same scope. */
async function expectOverviewAgrees(agent: typeof support, scope: ReturnType<typeof loggerScope>) {
  const res = await agent.get('/api/overview');
  expect(res.status).toBe(200);
  const flags = await reference.flagScan(t.sequelize, scope, clock);
  expect(Object.fromEntries(res.body.fleet.flags.map((f: { flag: string; count: number }) => [f.flag, f.count]))).toEqual(flags);
  expect(res.body.loggers.silent).toBe(flags.silent);
  expect(res.body.loggers.online).toBe(res.body.loggers.enrolled - flags.silent);
  return res.body;
}

const person = (role: 'support' | 'integrator', name: string, id = ''): Actor => ({ type: 'person', id, name, email: '', role });

const checkIn = (key: string, firmware: string, extra: Record<string, unknown> = {}) =>
  t.request().post(CHECK_IN).set(bearer(logger[key].token)).send(checkInBody(firmware, extra));

beforeAll(async () => {
  t = await startTestApp({ now: () => clock });
  a = await createFleet(t, { modelName: 'FL-2 field logger' });
  const newSite = async (key: string, name: string, customer: string) => {
    site[key] = (await Site.create({ name, customer, address: 'Aldmere Vale', latitude: null, longitude: null, timeZone: 'Europe/London', createdBy: null })).id;
  };
  site.hall = a.site.id; // Aldmere Village Hall, with coordinates
  await newSite('dairy', 'Coldbrook Dairy', 'Coldbrook Farms');
  await newSite('club', 'Vale Boat Club', 'Vale Boat Club');
  release.r214 = (await a.release({ version: '2.1.4', state: 'complete' })).id;
  await reached(t, release.r214, 'complete', daysBefore(20));
  release.r230 = (await a.release({ version: '2.3.0', state: 'draft', boards: ['B', 'C'] })).id;

  const healthy = { firmware: '2.1.4', lastSeenAgoS: 300, supplyV: 5.1, tempC: 21 };
  const add = async (key: string, siteKey: string, state: Parameters<typeof setReported>[3]) => {
    logger[key] = await a.logger({ siteId: site[siteKey], board: state.board ?? 'B' });
    await setReported(t, logger[key].id, clock, state);
  };
  await add('hallB', 'hall', healthy);
  await add('hallC', 'hall', { ...healthy, board: 'C' });
  await add('dairyOld', 'dairy', { ...healthy, firmware: '2.0.3' });
  await add('dairyLow', 'dairy', { ...healthy, supplyV: 4.0 });
  await add('clubA', 'club', { ...healthy, board: 'A' });
  await add('clubQuiet', 'club', { ...healthy, lastSeenAgoS: 1800 });

  support = await t.signedIn('support', 'Lena Support');
  tomasz = await t.signedIn('integrator', 'Tomasz Integrator');
  tomaszId = (await User.findOne({ where: { name: 'Tomasz Integrator' } }))!.id;
  await SiteIntegrator.create({ siteId: site.dairy, userId: tomaszId });
});
afterAll(() => t.close());

describe('fleet summaries against a full recomputation', () => {
  test('when the fleet is built and only 2.1.4 is current, then every summary agrees with the scans and one logger lags (2.0.3)', async () => {
    const lag = await expectSummariesAgree();
    expect(lag.scan).toHaveLength(1);
    expect(JSON.parse(lag.scan[0]).logger).toBe(logger.dairyOld.id);
  });

  test('when 2.3.0 becomes current (widening at 100 %), then the loggers on 2.1.4 lag for the reasons the rules give, in the summary as in the scan', async () => {
    await reached(t, release.r230, 'widening', daysBefore(1), { share: 100 });
    const lag = await expectSummariesAgree();
    const reasons = Object.fromEntries(lag.scan.map((r) => JSON.parse(r)).map((r) => [r.logger, r.reason]));
    // DEVICE_API.md rules: board A is not among 2.3.0's boards (rule 2); 4.0 V is below the 4.6 V guard (rule 5).
    expect(reasons[logger.clubA.id]).toBe('board_not_supported');
    expect(reasons[logger.dairyLow.id]).toBe('low_supply');
    expect(reasons[logger.hallB.id]).toBe('offered');
  });

  test('when a logger checks in, is offered 2.3.0, reports the install and checks in on 2.3.0, then counts and reasons follow at every step', async () => {
    const first = await checkIn('hallB', '2.1.4');
    expect(first.status).toBe(200);
    await expectSummariesAgree();
    for (const state of ['downloading', 'installing', 'installed']) {
      const res = await checkIn('hallB', '2.1.4', { report: { release: release.r230, state } });
      expect(res.status).toBe(200);
      await expectCountsAgree();
    }
    const moved = await checkIn('hallB', '2.3.0');
    expect(moved.status).toBe(200);
    const lag = await expectSummariesAgree();
    expect(lag.scan.map((r) => JSON.parse(r).logger)).not.toContain(logger.hallB.id);
  });

  test('when an install fails, then the logger lags as failed awaiting retry in the summary as in the scan', async () => {
    await checkIn('hallC', '2.1.4', { board: 'C' });
    const res = await checkIn('hallC', '2.1.4', { board: 'C', report: { release: release.r230, state: 'failed', reason: 'integrity', detail: 'digest mismatch' } });
    expect(res.status).toBe(200);
    const lag = await expectSummariesAgree();
    expect(lag.scan.map((r) => JSON.parse(r)).find((r) => r.logger === logger.hallC.id)?.reason).toBe('failed_awaiting_retry');
  });

  test('when the clock moves on past three check-in intervals, then loggers fall silent in the lagging summary without any write, as in the scan', async () => {
    clock = new Date(clock.getTime() + 2 * 3_600_000);
    const lag = await expectSummariesAgree();
    const silent = lag.scan.map((r) => JSON.parse(r)).filter((r) => r.reason === 'silent');
    expect(silent.length).toBeGreaterThan(0);
    await expectOverviewAgrees(support, loggerScope(person('support', 'Lena Support'), 'l'));
  });

  test('when a logger moves to another site and a logger is retired, then the per-site counts and lagging sites follow', async () => {
    await t.sequelize.query('UPDATE loggers SET site_id = :site WHERE id = :id', { replacements: { site: site.club, id: logger.dairyOld.id } });
    await t.sequelize.query("UPDATE loggers SET status = 'retired', retired_at = now() WHERE id = :id", { replacements: { id: logger.clubQuiet.id } });
    await expectSummariesAgree();
  });

  test('when counts fall to zero, then the fold deletes them through the index of zero counts, and a run asked for while one waits is that run', async () => {
    // The move and the retirement above left per-site counts at zero until a fold; the fold deletes them.
    const zeros = async () => (await t.sequelize.query<{ n: number }>('SELECT count(*)::int AS n FROM site_logger_counts WHERE n = 0', { type: QueryTypes.SELECT }))[0].n;
    const waiting = t.app.services.summaries.tick();
    expect(t.app.services.summaries.tick()).toBe(waiting);
    await waiting;
    expect(await zeros()).toBe(0);
    const next = t.app.services.summaries.tick();
    expect(next).not.toBe(waiting);
    await next;
    // A partial index serves a query whose WHERE clause implies the index's predicate (PostgreSQL
    // documentation, "Partial Indexes"); with sequential scans priced out, the planner shows it does.
    for (const table of ['site_logger_counts', 'fleet_logger_counts', 'site_report_counts', 'release_report_counts']) {
      const plan = await t.sequelize.transaction(async (transaction) => {
        await t.sequelize.query('SET LOCAL enable_seqscan = off', { transaction });
        const rows = await t.sequelize.query<{ 'QUERY PLAN': string }>(`EXPLAIN DELETE FROM ${table} WHERE n = 0`, { type: QueryTypes.SELECT, transaction });
        return rows.map((r) => r['QUERY PLAN']).join('\n');
      });
      expect(plan).toContain(`${table}_zero_idx`);
    }
  });

  test('when support and an integrator read the overview, version matrix and lagging sites, then each answer matches the scans within their scope', async () => {
    const integratorScope = loggerScope(person('integrator', 'Tomasz Integrator', tomaszId), 'l');
    const mine = await expectOverviewAgrees(tomasz, integratorScope);
    const [scoped] = await t.sequelize.query<{ total: number }>(`SELECT count(*)::int AS total FROM loggers l WHERE ${integratorScope.sql}`, {
      type: QueryTypes.SELECT,
      replacements: integratorScope.replacements,
    });
    expect(mine.loggers.total).toBe(scoped.total);
    const all = await support.get('/api/overview');
    expect(all.body.loggers.total).toBeGreaterThan(mine.loggers.total);

    const lagging = await tomasz.get('/api/fleet/lagging-sites').query({ pageSize: 100 });
    expect(lagging.status).toBe(200);
    expect(lagging.body.rows.map((r: LaggingSite) => r.siteId)).toEqual(lagging.body.total ? [site.dairy] : []);
    expect(mine.fleet.laggingSites.count).toBe(lagging.body.total);
    expect(lagging.body.asOf).toBe(clock.toISOString());

    const matrix = await tomasz.get('/api/fleet/versions');
    const counted = matrix.body.models.flatMap((m: { versions: { total: number }[] }) => m.versions.map((v) => v.total)).reduce((x: number, y: number) => x + y, 0);
    const [{ n }] = await t.sequelize.query<{ n: number }>(`SELECT count(*)::int AS n FROM loggers l WHERE l.status <> 'retired' AND ${integratorScope.sql}`, {
      type: QueryTypes.SELECT,
      replacements: integratorScope.replacements,
    });
    expect(counted).toBe(n);
  });
});
