// The fleet table's keys kept on the logger row (migration 0013): after each write that changes them —
// a site renamed or given another customer, a model renamed, a logger moved, a release becoming current
// and then withdrawn, a failed install retried, check-ins bringing resets, the 24 h window sliding on —
// every logger's keys are what a full recomputation from sites, models, releases, install reports and
// the check-in history gives. And the table's statements read loggers through an index, never a
// sequential scan (EXPLAIN).
import { QueryTypes } from 'sequelize';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { createFleet, checkInBody, bearer, type Fleet } from './device-fixtures';
import { hoursBefore, reached, setReported } from './fleet-fixtures';
import { CURRENT_RELEASES } from '../../server/fleet/sql';
import { SQL_WORDS } from '../../server/db/sql-words';
import { fleetSortKeys, type FleetSortKey } from '../../schemas/fleet';
import { UPDATE_STATES } from '../../schemas/words';

const T0 = new Date('2026-06-21T12:00:00Z');
let clock = T0;
let t: TestApp;
let fleet: Fleet;
type Agent = Awaited<ReturnType<TestApp['signedIn']>>;
let support: Agent;
let admin: Agent;
let engineer: Agent;
const lg: Record<string, { id: string; token: string; serial: string }> = {};
let r230: { id: string };

/**
 * The pipeline order the table sorts update states in (server/fleet/columns.ts): nothing yet, then the
 * install funnel as DEVICE_API.md orders its reports, then done.
 */
const PIPELINE = ['behind', 'failed', 'offered', 'downloading', 'downloaded', 'installing', 'installed', 'up_to_date'] as const;

/**
 * Every logger whose kept keys differ from a recomputation from the source rows, with both. The update
 * state is read as the fleet table read it before the keys were kept: against the current release of
 * the model and channel (CURRENT_RELEASES) and the logger's report for it. Resets in 24 h are counted
 * from the check-in history (watchdog and brown-out resets of the 24 h before the clock).
 */
async function mismatches(): Promise<unknown[]> {
  const rows = await t.sequelize.query<Record<string, unknown> & { id: string }>(
    `WITH current_releases AS (${CURRENT_RELEASES})
     SELECT l.id, l.serial,
            l.site_sort, COALESCE(lower(s.name), '') AS want_site_sort,
            l.customer_sort, COALESCE(lower(s.customer), '') AS want_customer_sort,
            l.model_sort, lower(m.name) AS want_model_sort,
            l.search_text, concat_ws(E'\\n', l.serial, s.name, s.customer) AS want_search_text,
            l.update_state, (CASE
              WHEN cr.id IS NULL OR l.firmware IS NULL THEN :behind
              WHEN l.firmware_key >= cr.version_key THEN :upToDate
              WHEN ir.state IS NULL THEN :behind
              WHEN ir.state = :failed AND ir.retried_at IS NOT NULL AND ir.retried_at >= ir.updated_at THEN :offered
              ELSE ir.state END) AS want_update_state,
            l.update_rank,
            l.resets_24h, LEAST(32, (SELECT COALESCE(sum(COALESCE((c.resets->>'watchdog')::int, 0) + COALESCE((c.resets->>'brownout')::int, 0)), 0)::int
                                       FROM check_ins c WHERE c.logger_id = l.id AND c.at > CAST(:now AS timestamptz) - interval '24 hours')) AS want_resets_24h
       FROM loggers l
       JOIN models m ON m.id = l.model_id
       LEFT JOIN sites s ON s.id = l.site_id
       LEFT JOIN current_releases cr ON cr.model_id = l.model_id AND cr.channel = l.channel
       LEFT JOIN install_reports ir ON ir.logger_id = l.id AND ir.release_id = cr.id`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, now: clock.toISOString() } },
  );
  return rows.flatMap((r) => {
    const wrong: Record<string, unknown> = {};
    for (const key of ['site_sort', 'customer_sort', 'model_sort', 'search_text', 'update_state', 'resets_24h']) {
      if (r[key] !== r[`want_${key}`]) wrong[key] = { kept: r[key], recomputed: r[`want_${key}`] };
    }
    if (r.update_rank !== PIPELINE.indexOf(r.want_update_state as (typeof PIPELINE)[number])) wrong.update_rank = { kept: r.update_rank, state: r.want_update_state };
    return Object.keys(wrong).length ? [{ serial: r.serial, ...wrong }] : [];
  });
}

const stateOf = async (name: string) =>
  (await t.sequelize.query<{ update_state: string }>('SELECT update_state FROM loggers WHERE id = :id', { type: QueryTypes.SELECT, replacements: { id: lg[name].id } }))[0].update_state;

beforeAll(async () => {
  t = await startTestApp({ now: () => clock });
  fleet = await createFleet(t, { modelName: 'FL-2 field logger' });
  [support, admin, engineer] = [await t.signedIn('support', 'Lena Test'), await t.signedIn('admin', 'Morgan Test'), await t.signedIn('release_engineer', 'Priya Test')];
  const r220 = await fleet.release({ version: '2.2.0', state: 'complete' });
  await reached(t, r220.id, 'complete', hoursBefore(T0, 48));
  r230 = await fleet.release({ version: '2.3.0', state: 'pilot', share: 0, pilotSiteIds: [fleet.pilotSite.id] });
  const reported = { lastSeenAgoS: 300, supplyV: 5.1, tempC: 24.5 };
  for (const [name, firmware, siteId] of [
    ['onCurrent', '2.2.0', fleet.site.id],
    ['older', '2.1.4', fleet.site.id],
    ['failedPilot', '2.2.0', fleet.pilotSite.id],
    ['downloading', '2.2.0', fleet.pilotSite.id],
    ['onPilot', '2.3.0', fleet.pilotSite.id],
  ] as const) {
    lg[name] = await fleet.logger({ siteId });
    await setReported(t, lg[name].id, T0, { ...reported, firmware });
  }
  lg.registered = await fleet.logger({ status: 'registered' });
  lg.early = await fleet.logger({ channel: 'early' });
  await setReported(t, lg.early.id, T0, { ...reported, firmware: '2.2.0' });
  // Install reports on the pilot release, as the check-in writes them.
  await t.sequelize.query(
    `INSERT INTO install_reports (logger_id, release_id, state, reason, offered_at, updated_at, finished_at) VALUES
       (:failedPilot, :release, :failed, 'verify_failed', :at, :at, :at),
       (:downloading, :release, :downloading_, NULL, :at, :at, NULL)`,
    { replacements: { ...SQL_WORDS, downloading_: 'downloading', failedPilot: lg.failedPilot.id, downloading: lg.downloading.id, release: r230.id, at: hoursBefore(T0, 2) } },
  );
});

afterAll(() => t.close());

describe('keys kept on the logger row', () => {
  test('when loggers are registered, given firmware and reports, then each key is what a recomputation gives (2.2.0 current)', async () => {
    expect(await mismatches()).toEqual([]);
    expect(await stateOf('onCurrent')).toBe('up_to_date');
    // Reports on the pilot release do not count while 2.2.0 is the current release.
    expect(await stateOf('failedPilot')).toBe('up_to_date');
    expect(await stateOf('older')).toBe('behind');
  });

  test('when the pilot release widens (it becomes current) and a failed install is retried, then the update states follow', async () => {
    expect((await engineer.post(`/api/releases/${r230.id}/transitions`).set(csrf).send({ action: 'widen', share: 25 })).status).toBe(200);
    expect(await mismatches()).toEqual([]);
    // The early channel has no release that reached widening: nothing is current there.
    expect([await stateOf('failedPilot'), await stateOf('downloading'), await stateOf('onPilot'), await stateOf('onCurrent'), await stateOf('early')]).toEqual([
      'failed',
      'downloading',
      'up_to_date',
      'behind',
      'behind',
    ]);
    expect((await engineer.post(`/api/releases/${r230.id}/retry`).set(csrf).send({ loggerIds: [lg.failedPilot.id] })).status).toBe(200);
    expect(await stateOf('failedPilot')).toBe('offered');
    expect(await mismatches()).toEqual([]);
    // The table sorts by the kept state in pipeline order.
    const sorted = (await support.get('/api/loggers').query({ sort: 'updateState', pageSize: 100 })).body.rows as { updateState: string }[];
    const ranks = sorted.map((r) => PIPELINE.indexOf(r.updateState as (typeof PIPELINE)[number]));
    expect(ranks).toEqual([...ranks].sort((a, b) => a - b));
  });

  test('when a site is renamed and given another customer, a model is renamed and a logger moves, then sorts and search follow', async () => {
    expect((await admin.patch(`/api/sites/${fleet.site.id}`).set(csrf).send({ name: 'Aldmere Old School', customer: 'Aldmere Heritage Trust' })).status).toBe(200);
    expect((await admin.patch(`/api/models/${fleet.model.id}`).set(csrf).send({ name: 'FL-2 field logger (rev 2)' })).status).toBe(200);
    // A move as the registry writes it: the logger row's site.
    await t.sequelize.query('UPDATE loggers SET site_id = :site WHERE id = :id', { replacements: { site: fleet.pilotSite.id, id: lg.older.id } });
    expect(await mismatches()).toEqual([]);
    const found = (await support.get('/api/loggers').query({ q: 'heritage trust' })).body;
    expect(found.rows.map((r: { serial: string }) => r.serial).sort()).toEqual([lg.onCurrent.serial, lg.early.serial].sort());
    expect(found.totalIsEstimate).toBe(false);
    expect((await support.get('/api/loggers').query({ q: 'Brackenford' })).body.rows.map((r: { serial: string }) => r.serial)).toContain(lg.older.serial);
  });

  test('when loggers check in with resets and the 24 h window slides past some, then resets in 24 h is the count of the last 24 h', async () => {
    const checkIn = async (name: string, counts: Record<string, number>) =>
      expect((await t.request().post('/api/device/v1/check-in').set(bearer(lg[name].token)).send(checkInBody('2.2.0', { reset_counts: counts }))).status).toBe(200);
    clock = new Date(T0.getTime() + 3_600_000);
    await checkIn('onCurrent', { watchdog: 2, brownout: 1, power_on: 4 });
    clock = new Date(T0.getTime() + 20 * 3_600_000);
    await checkIn('onCurrent', { brownout: 1 });
    await checkIn('early', { watchdog: 1 });
    expect(await mismatches()).toEqual([]);
    // 26 h on: the first check-in's three resets have left the window; the table trims it before sorting.
    clock = new Date(T0.getTime() + 26 * 3_600_000);
    [support, engineer] = [await t.signedIn('support', 'Lena Test'), await t.signedIn('release_engineer', 'Priya Test')]; // sessions of a day ago have lapsed
    const rows = (await support.get('/api/loggers').query({ sort: 'resets24h', dir: 'desc', pageSize: 100 })).body.rows as { serial: string; resets24h: number }[];
    expect(rows.slice(0, 2).map((r) => `${r.serial} ${r.resets24h}`).sort()).toEqual([`${lg.onCurrent.serial} 1`, `${lg.early.serial} 1`].sort());
    expect(rows[2].resets24h).toBe(0);
    expect(await mismatches()).toEqual([]);
  });

  test('when the current release is withdrawn, then the earlier complete release is current again', async () => {
    expect((await engineer.post(`/api/releases/${r230.id}/transitions`).set(csrf).send({ action: 'withdraw', reason: 'wrong calibration table' })).status).toBe(200);
    expect(await mismatches()).toEqual([]);
    expect(await stateOf('failedPilot')).toBe('up_to_date');
    expect(await stateOf('onPilot')).toBe('up_to_date');
  });

  test('when the pipeline order is compared with the update states, then it names each state once', () => {
    expect([...PIPELINE].sort()).toEqual([...UPDATE_STATES].sort());
  });
});

// ─── Plans ─────────────────────────────────────────────────────────────────

type PlanNode = { 'Node Type': string; 'Relation Name'?: string; 'Index Name'?: string; Filter?: string; Plans?: PlanNode[] };
const nodesOf = (n: PlanNode): PlanNode[] => [n, ...(n.Plans ?? []).flatMap(nodesOf)];

/** The statements that read loggers while the fleet table (or another path) answers `query`, as Sequelize sends them. */
async function statementsOf(query: Record<string, string>, path = '/api/loggers'): Promise<string[]> {
  const options = (t.sequelize as unknown as { options: { logging?: unknown } }).options;
  const before = options.logging;
  const seen: string[] = [];
  options.logging = (line: string) => seen.push(line.replace(/^Executing \([^)]*\): /, ''));
  try {
    expect((await support.get(path).query(query)).status).toBe(200);
  } finally {
    options.logging = before;
  }
  return seen.filter((s) => /^\s*(WITH|SELECT)\b/.test(s) && /\bFROM loggers l\b/.test(s));
}

/**
 * The plan of a statement with sequential scans priced out (enable_seqscan = off). The test fleet is a
 * few dozen loggers, for which reading the whole table is rightly the cheapest plan, and a table grown
 * "large enough" gives plans that depend on its statistics. Priced out, a sequential scan is still
 * chosen when no index can answer the statement — which is what this test must catch — and otherwise
 * the planner shows the index plan, deterministically.
 */
async function planOf(sql: string): Promise<PlanNode[]> {
  return t.sequelize.transaction(async (transaction) => {
    await t.sequelize.query('SET LOCAL enable_seqscan = off', { transaction });
    const [row] = await t.sequelize.query<{ 'QUERY PLAN': [{ Plan: PlanNode }] }>(`EXPLAIN (FORMAT JSON) ${sql}`, { type: QueryTypes.SELECT, transaction });
    return nodesOf(row['QUERY PLAN'][0].Plan);
  });
}

const onLoggers = (nodes: PlanNode[]) => nodes.filter((n) => n['Relation Name'] === 'loggers' || n['Index Name']?.startsWith('loggers_'));

/** The index each sort key pages by (migrations 0006, 0007 and 0013). */
const SORT_INDEX: Record<FleetSortKey, string> = {
  serial: 'loggers_sort_serial_idx',
  site: 'loggers_sort_site_idx',
  customer: 'loggers_sort_customer_idx',
  model: 'loggers_sort_model_idx',
  board: 'loggers_sort_board_idx',
  channel: 'loggers_sort_channel_idx',
  firmware: 'loggers_sort_firmware_idx',
  updateState: 'loggers_sort_update_idx',
  lastSeen: 'loggers_sort_last_seen_idx',
  supplyV: 'loggers_sort_supply_idx',
  resets24h: 'loggers_sort_resets_idx',
};

describe('plans', () => {
  test.each(fleetSortKeys.flatMap((sort) => [[sort, 'asc'], [sort, 'desc']] as const))(
    'when page 1 is sorted by %s %s, then loggers are read through the sort key’s index, with no sequential scan',
    async (sort, dir) => {
      const statements = await statementsOf({ sort, dir });
      expect(statements.length).toBeGreaterThanOrEqual(2); // the page and its count
      const page = statements.find((s) => s.includes('ORDER BY'))!;
      const nodes = onLoggers(await planOf(page));
      expect(nodes.filter((n) => n['Node Type'] === 'Seq Scan')).toEqual([]);
      expect(nodes.map((n) => n['Index Name'])).toContain(SORT_INDEX[sort]);
      for (const s of statements) expect(onLoggers(await planOf(s)).filter((n) => n['Node Type'] === 'Seq Scan')).toEqual([]);
    },
  );

  test('when the table is searched by text, then the search reads the trigram index, with no sequential scan', async () => {
    const statements = await statementsOf({ q: 'brackenford' });
    const plans = await Promise.all(statements.map(planOf));
    for (const nodes of plans) expect(onLoggers(nodes).filter((n) => n['Node Type'] === 'Seq Scan')).toEqual([]);
    const count = statements.findIndex((s) => s.includes('count(*)'));
    expect(onLoggers(plans[count]).map((n) => n['Index Name'])).toContain('loggers_search_idx');
  });

  test.each([
    ['silent', 'loggers_silence_idx'],
    ['low_supply', 'loggers_supply_idx'],
  ] as const)('when the overview counts the %s flag, then each model’s count is one range of %s, with no row filtered', async (flag, index) => {
    const statements = await statementsOf({}, '/api/overview');
    const count = statements.find((s) => s.includes('count(*)') && s.includes(index === 'loggers_silence_idx' ? 'last_seen_at' : 'supply_v'))!;
    const nodes = onLoggers(await planOf(count));
    // One scan per hardware model, each answering every comparison from the index (migration 0023), so
    // that on a vacuumed table it reads no row at all (an Index Only Scan, as the bench's EXPLAIN shows).
    const [{ models }] = await t.sequelize.query<{ models: number }>('SELECT count(*)::int AS models FROM models', { type: QueryTypes.SELECT });
    expect(nodes).toHaveLength(models);
    for (const node of nodes) {
      expect(['Index Only Scan', 'Index Scan']).toContain(node['Node Type']);
      expect({ index: node['Index Name'], filter: node.Filter }).toEqual({ index, filter: undefined });
    }
  });
});
