// The fleet table: GET /api/loggers with every filter and sort, keyset paging, flags
// against a hand-built fleet, refusals of injection attempts, and the streamed CSV export.
import semver from 'semver';
import { parse as parseCsv } from 'csv-parse/sync';
import { startTestApp, csrf, type TestApp } from '../helpers/app';
import { Site } from '../../server/db/models';
import { createFleet, checkInBody, bearer, type Fleet } from './device-fixtures';
import { addCheckIn, hoursBefore, reached, setReported } from './fleet-fixtures';
import { encodeCursor, exportFleet } from '../../server/fleet/table';
import type { Actor } from '../../server/auth/actor';
import { loggersQuery } from '../../schemas/loggers';
import { SORTS } from '../../server/fleet/columns';
import { fleetRow } from '../../schemas/fleet';

const now = new Date('2026-06-21T12:00:00Z');
let t: TestApp;
let fleet: Fleet;
const ids: Record<string, string> = {};
const serialOf: Record<string, string> = {};
type Agent = Awaited<ReturnType<TestApp['signedIn']>>;
let support: Agent;

// Fill-in loggers: versions chosen to exercise semantic-version precedence (semver.org §11: numeric
// identifiers compare numerically, 2.10.0 > 2.9.0; a pre-release is below its release; 1.0.0-beta.2 <
// 1.0.0-beta.11 < 1.0.0-rc.1).
const fillVersions = ['2.9.0', '2.10.0', '2.3.0-rc.1', '2.3.0-beta.11', '2.3.0-beta.2', '2.0.3', '2.1.4', '2.3.0', '3.0.0-beta.2', '2.2.0'];

beforeAll(async () => {
  t = await startTestApp({ now: () => now });
  fleet = await createFleet(t, { checkInIntervalS: 900 }); // model: 900 s interval, update minimum 4.6 V
  const hall = await Site.create({ name: 'Hall "North", Aldmere', customer: 'Fernhollow Energy Co-op', address: 'North Row, Aldmere', latitude: null, longitude: null, timeZone: 'Europe/London', createdBy: null });
  const add = async (name: string, state: Parameters<typeof setReported>[3], opts: { siteId?: string; status?: 'registered' | 'enrolled' } = {}) => {
    const l = await fleet.logger({ siteId: opts.siteId, status: opts.status, board: state.board });
    ids[name] = l.id;
    serialOf[name] = l.serial;
    if (opts.status !== 'registered') await setReported(t, l.id, now, state);
    return l;
  };
  const healthy = { firmware: '2.3.0', lastSeenAgoS: 300, supplyV: 5.1, tempC: 24.5 };
  await add('healthy', healthy);
  // Silent: no check-in for 3 intervals (3 × 900 s = 2700 s). The boundary itself is not yet silent.
  await add('silent', { ...healthy, lastSeenAgoS: 2701 });
  await add('silentEdge', { ...healthy, lastSeenAgoS: 2700 });
  await add('neverSeen', { ...healthy, lastSeenAgoS: null, firmware: null });
  // Unstable: ≥ 3 watchdog or brown-out resets in 24 h (the product's rule, schemas/fleet.ts UNSTABLE_RESETS_24H); power-on resets and older ones do not count.
  await add('unstable', healthy);
  await add('almostUnstable', healthy);
  // Low supply: below the model's update minimum (4.6 V); exactly the minimum is not below it.
  await add('lowSupply', { ...healthy, supplyV: 4.5 });
  await add('supplyEdge', { ...healthy, supplyV: 4.6 });
  // Probe fault (DS18B20 data sheet, Table 1 and its footnote: +85 °C is the power-on reset value;
  // the measuring range is −55 to +125 °C). The range ends themselves are valid readings.
  await add('probe85', { ...healthy, tempC: 85 });
  await add('probeHot', { ...healthy, tempC: 125.5 });
  await add('probeCold', { ...healthy, tempC: -55 });
  await add('probeTop', { ...healthy, tempC: 125 });
  await add('hallA', { ...healthy, board: 'A', firmware: '2.1.4' }, { siteId: hall.id });
  await add('hallC', { ...healthy, board: 'C', firmware: '2.2.0' }, { siteId: hall.id });
  await add('registered', {}, { status: 'registered' });
  for (let i = 0; i < fillVersions.length * 2; i++) {
    await add(`fill${i}`, { ...healthy, firmware: fillVersions[i % fillVersions.length], lastSeenAgoS: 60 * (i + 1), supplyV: 4.7 + (i % 7) / 10 }, { siteId: i % 2 ? fleet.pilotSite.id : undefined });
  }

  await addCheckIn(t, ids.unstable, hoursBefore(now, 30), { resets: { watchdog: 4 } }); // older than 24 h
  await addCheckIn(t, ids.unstable, hoursBefore(now, 20), { resets: { watchdog: 2 }, resetReason: 'watchdog' });
  await addCheckIn(t, ids.unstable, hoursBefore(now, 2), { resets: { brownout: 1, power_on: 1 }, resetReason: 'brownout' });
  await addCheckIn(t, ids.almostUnstable, hoursBefore(now, 3), { resets: { watchdog: 1, brownout: 1, power_on: 3 }, resetReason: 'power_on' });

  // The current release of the stable channel: 2.3.0, complete. Update states come from install reports.
  const current = await fleet.release({ version: '2.3.0', state: 'complete' });
  await reached(t, current.id, 'complete', hoursBefore(now, 72));
  const report = (logger: string, state: string, reason: string | null = null) =>
    t.sequelize.query(
      `INSERT INTO install_reports (logger_id, release_id, state, reason, offered_at, updated_at) VALUES (:l, :r, :state, :reason, :at, :at)`,
      { replacements: { l: ids[logger], r: current.id, state, reason, at: hoursBefore(now, 1) } },
    );
  await report('hallA', 'downloading');
  await report('hallC', 'failed', 'integrity');
  await report('fill5', 'installed'); // runs 2.0.3: installed, not yet confirmed
  await report('fill6', 'offered'); // runs 2.1.4
  support = await t.signedIn('support', 'Lena Support');
});
afterAll(() => t.close());

type Row = { id: string; serial: string; siteName: string | null; customer: string | null; modelName: string; board: string; channel: string; firmware: string | null; updateState: string; lastSeenAt: string | null; supplyV: number | null; resets24h: number; flags: string[]; worstFlag: string | null };

async function all(query: Record<string, string | number> = {}): Promise<{ rows: Row[]; total: number }> {
  const res = await support.get('/api/loggers').query({ pageSize: 100, ...query });
  expect(res.status).toBe(200);
  return res.body;
}
const names = (rows: Row[]) => Object.keys(ids).filter((n) => rows.some((r) => r.id === ids[n])).sort();

describe('flags', () => {
  test('when support filters by each flag, then exactly the loggers the rules name are listed, boundaries excluded', async () => {
    expect(names((await all({ flag: 'silent' })).rows)).toEqual(['neverSeen', 'silent']);
    expect(names((await all({ flag: 'unstable' })).rows)).toEqual(['unstable']);
    expect(names((await all({ flag: 'low_supply' })).rows)).toEqual(['lowSupply']);
    expect(names((await all({ flag: 'probe_fault' })).rows)).toEqual(['probe85', 'probeHot']);
  });

  test('when a row is shown, then it carries resets in 24 h, its flags and the worst of them', async () => {
    const { rows } = await all();
    const row = (n: string) => rows.find((r) => r.id === ids[n])!;
    expect(row('unstable').resets24h).toBe(3); // 2 watchdog + 1 brown-out within 24 h; the 4 from 30 h ago have aged out
    expect(row('almostUnstable').resets24h).toBe(2);
    expect(row('unstable').flags).toEqual(['unstable']);
    expect(row('healthy')).toMatchObject({ flags: [], worstFlag: null, resets24h: 0 });
    expect(row('silent')).toMatchObject({ flags: ['silent'], worstFlag: 'silent' });
  });

  test('when a logger checks in through the device API with brown-out resets, then its resets in 24 h grow by them', async () => {
    const l = await fleet.logger();
    const res = await t.request().post('/api/device/v1/check-in').set(bearer(l.token)).send(checkInBody('2.3.0', { reset_counts: { brownout: 2, power_on: 1 } }));
    expect(res.status).toBe(200);
    const { rows } = await all({ q: l.serial });
    expect(rows[0].resets24h).toBe(2);
  });
});

describe('rows', () => {
  test('when the fleet is listed, then every row has exactly the fields the shared column list declares, of their declared types', async () => {
    const { rows } = await all();
    expect(rows.length).toBeGreaterThan(25);
    for (const row of rows) expect(fleetRow.safeParse(row).error).toBeUndefined();
  });
});

describe('filters', () => {
  test('when filtered by text, site, model, board, channel and status, then every row matches and the total counts them', async () => {
    const hall = await all({ q: '"north"' });
    expect(names(hall.rows)).toEqual(['hallA', 'hallC']);
    expect(hall.total).toBe(2);
    const byCustomer = await all({ q: 'fernhollow energy' });
    expect(byCustomer.rows.every((r) => r.customer === 'Fernhollow Energy Co-op')).toBe(true);
    const bySerial = await all({ q: serialOf.probe85.toLowerCase() });
    expect(names(bySerial.rows)).toEqual(['probe85']);
    const pilot = await all({ siteId: fleet.pilotSite.id });
    expect(pilot.total).toBe(fillVersions.length);
    expect((await all({ modelId: fleet.model.id })).total).toBe((await all()).total);
    expect(names((await all({ board: 'a' })).rows)).toEqual(['hallA']);
    expect((await all({ channel: 'early' })).total).toBe(0);
    expect(names((await all({ status: 'registered' })).rows)).toEqual(['registered']);
  });

  test('when filtered by an exact version or a semver range, then the rows are those the semver package says match', async () => {
    const everything = (await all()).rows;
    const exact = await all({ version: '2.1.4' });
    expect(exact.rows.map((r) => r.id).sort()).toEqual(everything.filter((r) => r.firmware === '2.1.4').map((r) => r.id).sort());
    for (const range of ['>=2.1.0 <2.3.0', '2.x', '^2.3.0-beta.2', '3.x']) {
      const res = await all({ version: range });
      const expected = everything.filter((r) => r.firmware && semver.satisfies(r.firmware, range, { includePrerelease: true })).map((r) => r.id).sort();
      expect(res.rows.map((r) => r.id).sort()).toEqual(expected);
      expect(res.total).toBe(expected.length);
    }
    const bad = await support.get('/api/loggers').query({ version: 'two point one' });
    expect(bad.status).toBe(400);
    expect(bad.body.errors[0].path).toBe('version');
  });

  test('when filtered by update state, then it reads against the current release 2.3.0 of the stable channel', async () => {
    expect(names((await all({ updateState: 'downloading' })).rows)).toEqual(['hallA']);
    expect(names((await all({ updateState: 'failed' })).rows)).toEqual(['hallC']);
    expect(names((await all({ updateState: 'installed' })).rows)).toEqual(['fill5']);
    expect(names((await all({ updateState: 'offered' })).rows)).toEqual(['fill6']);
    const upToDate = (await all({ updateState: 'up_to_date' })).rows;
    // semver.org §11: 2.3.0 and above; 2.9.0 and 2.10.0 are above, the 2.3.0 pre-releases below.
    expect(upToDate.every((r) => r.firmware !== null && semver.gte(r.firmware, '2.3.0'))).toBe(true);
    const everything = (await all()).rows;
    expect(upToDate).toHaveLength(everything.filter((r) => r.firmware !== null && semver.valid(r.firmware) && semver.gte(r.firmware, '2.3.0')).length);
  });
});

describe('sorting', () => {
  const compare: Record<string, (a: Row, b: Row) => number> = {
    serial: (a, b) => cmp(a.serial.toLowerCase(), b.serial.toLowerCase()),
    board: (a, b) => cmp(a.board, b.board),
    channel: (a, b) => cmp(a.channel, b.channel),
    // Reference: the semver package's precedence (semver.org §11); no version sorts first.
    firmware: (a, b) => (a.firmware === b.firmware ? 0 : a.firmware === null ? -1 : b.firmware === null ? 1 : semver.compare(a.firmware, b.firmware)),
    lastSeen: (a, b) => cmp(a.lastSeenAt ? Date.parse(a.lastSeenAt) : -Infinity, b.lastSeenAt ? Date.parse(b.lastSeenAt) : -Infinity),
    supplyV: (a, b) => cmp(a.supplyV ?? -1, b.supplyV ?? -1),
    resets24h: (a, b) => cmp(a.resets24h, b.resets24h),
    site: (a, b) => cmp((a.siteName ?? '').toLowerCase(), (b.siteName ?? '').toLowerCase()),
    customer: (a, b) => cmp((a.customer ?? '').toLowerCase(), (b.customer ?? '').toLowerCase()),
    model: (a, b) => cmp(a.modelName.toLowerCase(), b.modelName.toLowerCase()),
    updateState: (a, b) => cmp(RANK.indexOf(a.updateState), RANK.indexOf(b.updateState)),
  };
  const RANK = ['behind', 'failed', 'offered', 'downloading', 'downloaded', 'installing', 'installed', 'up_to_date'];
  function cmp<T extends string | number>(a: T, b: T) {
    return a < b ? -1 : a > b ? 1 : 0;
  }

  test.each(Object.keys(compare))('when sorted by %s both ways, then each row is in order with the next', async (sort) => {
    for (const dir of ['asc', 'desc'] as const) {
      const { rows } = await all({ sort, dir });
      expect(rows.length).toBeGreaterThan(25);
      for (let i = 1; i < rows.length; i++) {
        const c = compare[sort](rows[i - 1], rows[i]);
        expect(dir === 'asc' ? c <= 0 : c >= 0).toBe(true);
      }
    }
  });

  test('when paging by page numbers and by keyset cursor, then the pages join into the whole list with no row twice', async () => {
    // Page mode: nextCursor is the next page number.
    const whole = (await all({ sort: 'firmware', dir: 'desc' })).rows.map((r) => r.id);
    const first = await support.get('/api/loggers').query({ sort: 'firmware', dir: 'desc', pageSize: 25 });
    expect(first.body.nextCursor).toBe('2');
    const second = await support.get('/api/loggers').query({ sort: 'firmware', dir: 'desc', pageSize: 25, cursor: first.body.nextCursor });
    expect(second.body.nextCursor).toBeUndefined();
    expect([...first.body.rows, ...second.body.rows].map((r: Row) => r.id)).toEqual(whole);

    // Keyset walk: "start", then each answer's cursor (the last row's sort value and id).
    const walked: string[] = [];
    let cursor: string | undefined = 'start';
    while (cursor) {
      const res = await support.get('/api/loggers').query({ sort: 'lastSeen', dir: 'asc', pageSize: 25, cursor });
      expect(res.status).toBe(200);
      walked.push(...res.body.rows.map((r: Row) => r.id));
      cursor = res.body.nextCursor;
    }
    expect(walked).toEqual((await all({ sort: 'lastSeen', dir: 'asc' })).rows.map((r) => r.id));
    expect(new Set(walked).size).toBe(walked.length);
  });

  test('when a cursor is for another sort or hand-edited, then 400 names the cursor', async () => {
    const other = encodeCursor({ sort: 'serial', dir: 'asc', value: 'x', id: ids.healthy });
    const res = await support.get('/api/loggers').query({ sort: 'supplyV', cursor: other });
    expect(res.status).toBe(400);
    expect(res.body.errors[0].path).toBe('cursor');
    const edited = encodeCursor({ sort: 'supplyV', dir: 'asc', value: "1); DROP TABLE loggers; --", id: ids.healthy });
    expect((await support.get('/api/loggers').query({ sort: 'supplyV', cursor: edited })).status).toBe(400);
  });
});

describe('semantic-version precedence in SQL', () => {
  test('when the examples of semver.org §11 are ordered by the firmware sort key, then they come in the order the specification lists', async () => {
    // semver.org 2.0.0 §11: 1.0.0 < 2.0.0 < 2.1.0 < 2.1.1, and 1.0.0-alpha < 1.0.0-alpha.1 < 1.0.0-alpha.beta <
    // 1.0.0-beta < 1.0.0-beta.2 < 1.0.0-beta.11 < 1.0.0-rc.1 < 1.0.0; build metadata does not count (§10).
    const spec = ['1.0.0-alpha', '1.0.0-alpha.1', '1.0.0-alpha.beta', '1.0.0-beta', '1.0.0-beta.2', '1.0.0-beta.11', '1.0.0-rc.1', '1.0.0', '2.0.0', '2.1.0', '2.1.1', '2.10.0', '10.0.0'];
    const shuffled = [...spec].reverse();
    const [rows] = await t.sequelize.query(
      `SELECT v FROM unnest(ARRAY[:versions]::text[]) AS x(v) ORDER BY heliodor_semver_key(v) COLLATE "C"`,
      { replacements: { versions: shuffled } },
    );
    expect((rows as { v: string }[]).map((r) => r.v)).toEqual(spec);
    const [[same]] = (await t.sequelize.query(`SELECT heliodor_semver_key('1.0.0+build.7') = heliodor_semver_key('1.0.0') AS equal`)) as [{ equal: boolean }[], unknown];
    expect(same.equal).toBe(true);
  });
});

describe('indexes', () => {
  test.each([
    ['serial', 'loggers_sort_serial_idx'],
    ['board', 'loggers_sort_board_idx'],
    ['channel', 'loggers_sort_channel_idx'],
    ['firmware', 'loggers_sort_firmware_idx'],
    ['lastSeen', 'loggers_sort_last_seen_idx'],
    ['supplyV', 'loggers_sort_supply_idx'],
    ['site', 'loggers_sort_site_idx'],
    ['customer', 'loggers_sort_customer_idx'],
    ['model', 'loggers_sort_model_idx'],
    ['updateState', 'loggers_sort_update_idx'],
    ['resets24h', 'loggers_sort_resets_idx'],
  ] as const)('when the fleet is read in %s order, then PostgreSQL can walk an index in that order (EXPLAIN)', async (sort, index) => {
    const plan = await t.sequelize.transaction(async (transaction) => {
      // A small table is cheaper to sort than to walk by index; forbid the sort to see whether the index can serve the order.
      await t.sequelize.query('SET LOCAL enable_seqscan = off; SET LOCAL enable_sort = off', { transaction });
      const [rows] = await t.sequelize.query(`EXPLAIN SELECT l.id FROM loggers l ORDER BY ${SORTS[sort].expr} DESC, l.id DESC LIMIT 25`, { transaction });
      return (rows as { 'QUERY PLAN': string }[]).map((r) => r['QUERY PLAN']).join('\n');
    });
    expect(plan).toContain(index);
  });
});

describe('refusing injection', () => {
  test('when the sort key, direction, flag or update state is not on the allow-list, then 400 names the parameter and the table is intact', async () => {
    const before = (await all()).total;
    for (const [param, value] of [
      ['sort', 'serial;DROP TABLE loggers'],
      ['sort', 'l.id'],
      ['sort', 'firmware_key'],
      ['dir', 'asc; DELETE FROM loggers'],
      ['flag', "silent' OR '1'='1"],
      ['updateState', 'failed) OR (1=1'],
      ['siteId', "' OR 1=1 --"],
      ['pageSize', '10000'],
    ]) {
      const res = await support.get('/api/loggers').query({ [param]: value });
      expect(res.status).toBe(400);
      expect(res.headers['content-type']).toMatch(/application\/problem\+json/);
      expect(res.body.errors.map((e: { path: string }) => e.path)).toContain(param);
    }
    expect((await all()).total).toBe(before);
  });

  test("when text filters carry SQL, then they are matched as plain text and match nothing", async () => {
    expect((await all({ q: "' OR 1=1 --" })).total).toBe(0);
    expect((await all({ board: "B' OR 'x'='x" })).total).toBe(0);
    expect((await all({ q: '%' })).total).toBe(0); // LIKE wildcards are escaped too
  });
});

describe('CSV export', () => {
  test('when support exports a filter, then every matching row comes (not only a page), with a header, as an attachment', async () => {
    const res = await support.get('/api/loggers/export.csv').query({ sort: 'firmware', dir: 'desc' });
    expect(res.status).toBe(200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="heliodor-loggers-.*\.csv"$/);
    // Reference reader: csv-parse (RFC 4180).
    const records = parseCsv(res.text, { columns: true }) as Record<string, string>[];
    const listed = await all({ sort: 'firmware', dir: 'desc' });
    expect(listed.total).toBeGreaterThan(25);
    expect(records).toHaveLength(listed.total);
    expect(records.map((r) => r.serial)).toEqual(listed.rows.map((r) => r.serial));
    expect(Object.keys(records[0])).toEqual(['serial', 'site', 'customer', 'model', 'board', 'channel', 'status', 'firmware', 'update_state', 'last_seen_at', 'supply_v', 'temp_c', 'resets_24h', 'flags']);
  });

  test('when the export reads the fleet in small batches, then the file is the same as read in one batch: no row lost or repeated at the seams', async () => {
    const lena: Actor = { type: 'person', id: '', name: 'Lena', email: 'lena@fernhollow.example', role: 'support' };
    const query = loggersQuery.parse({ sort: 'lastSeen', dir: 'desc' });
    const exported = async (batchSize: number) => {
      const chunks: string[] = [];
      const count = await exportFleet({ sequelize: t.sequelize, now: () => now }, lena, query, async (c) => void chunks.push(c), batchSize);
      return { count, text: chunks.join('') };
    };
    const whole = await exported(10_000);
    expect(whole.count).toBeGreaterThan(25);
    for (const size of [1, 4, whole.count - 1, whole.count]) expect(await exported(size)).toEqual(whole);
  });

  test('when a site name holds commas and quotes, then the field is quoted with the quotes doubled (RFC 4180 §2.6–2.7) and lines end in CRLF', async () => {
    const res = await support.get('/api/loggers/export.csv').query({ q: 'north' });
    expect(res.text).toContain('"Hall ""North"", Aldmere"');
    expect(res.text.split('\r\n').filter(Boolean)).toHaveLength(3);
    const records = parseCsv(res.text, { columns: true }) as Record<string, string>[];
    expect(records.map((r) => r.site)).toEqual(['Hall "North", Aldmere', 'Hall "North", Aldmere']);
  });

  test('when a site name starts like a spreadsheet formula, then the exported cell is prefixed with an apostrophe (OWASP "CSV Injection", common practice)', async () => {
    const odd = await Site.create({ name: '=Quarry Hut+1', customer: '@Vale Quarry', address: 'Quarry Lane', latitude: null, longitude: null, timeZone: 'Europe/London', createdBy: null });
    const l = await fleet.logger({ siteId: odd.id });
    const res = await support.get('/api/loggers/export.csv').query({ q: l.serial });
    const [record] = parseCsv(res.text, { columns: true }) as Record<string, string>[];
    expect(record).toMatchObject({ site: "'=Quarry Hut+1", customer: "'@Vale Quarry" });
  });

  test('when the export is asked with a bad sort, then 400 before anything is streamed', async () => {
    const res = await support.get('/api/loggers/export.csv').query({ sort: 'serial;DROP TABLE loggers' });
    expect(res.status).toBe(400);
    expect(res.body.errors[0].path).toBe('sort');
  });
});

describe('access', () => {
  test('when an automation token has the fleet:read scope, then it may read the fleet views and export, but not write notes', async () => {
    const admin = await t.signedIn('admin', 'Morgan Admin');
    const issued = await admin.post('/api/tokens').set(csrf).send({ name: 'Fleet report job', scopes: ['fleet:read'], expiresAt: new Date(Date.now() + 30 * 86_400_000).toISOString() });
    expect(issued.status).toBe(201);
    const auth = { Authorization: `Bearer ${issued.body.token}` };
    expect((await t.request().get('/api/loggers/export.csv').set(auth)).status).toBe(200);
    expect((await t.request().get('/api/fleet/versions').set(auth)).status).toBe(200);
    expect((await t.request().get('/api/fleet/lagging-sites').set(auth)).status).toBe(200);
    expect((await t.request().get(`/api/loggers/${ids.healthy}/timeline`).set(auth)).status).toBe(200);
    expect((await t.request().post(`/api/loggers/${ids.healthy}/notes`).set(auth).send({ text: 'from a script' })).status).toBe(403);
  });

  test('when nobody is signed in, then 401; when an integrator asks, then only loggers they may see', async () => {
    expect((await t.request().get('/api/loggers/export.csv')).status).toBe(401);
    const integrator = await t.signedIn('integrator', 'Ade Integrator');
    const res = await integrator.get('/api/loggers').query({ pageSize: 100 });
    expect(res.status).toBe(200);
    expect(res.body.total).toBe(0);
  });
});
