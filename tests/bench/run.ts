// `npm run bench`: seeds a throwaway PostgreSQL with the Fernhollow fleet at size (default 100 000
// loggers), starts Heliodor in-process on a random port, and times the console's fleet views and the
// device API. Results are ratios against a baseline measured in the same run (GET /api/health with the
// same session), so runs on different machines compare. See tests/bench/README.md.
//
//   npm run bench                              100 000 loggers, every scenario
//   npm run bench -- --loggers 5000            a quick run
//   npm run bench -- --only 'fleet sort'       scenarios whose name matches
//   npm run bench -- --compare results/a.json  this run's ratio changes against an earlier one
//   npm run bench -- --compare a.json --with b.json   compare two runs, no benchmark
//   npm run bench -- --loggers 1000000 --only check-in   the check-in at a million loggers (compare with a 10 000 run)
//   npm run bench -- --workers 0                   skip the two-process run
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import type { Server } from 'node:http';
import { parseArgs } from 'node:util';
import { Client } from 'pg';
import type { Sequelize } from 'sequelize';
import { createApp } from '../../server/app';
import { createMailer } from '../../server/mail/mailer';
import { appConfig } from '../helpers/config';
import { sessionCookie } from '../../server/auth/session';
import { fleetSortKeys } from '../../schemas/fleet';
import { LAGGING_REASONS } from '../../schemas/words';
import { startBenchDatabase } from './database';
import { measure, type MeasureOptions, type Request } from './measure';
import { compare, readRun, table, writeRun, type BenchRun, type ExplainResult, type ScaleResult, type ScenarioResult } from './report';
import { scenarioGoal, verdictText } from './goals';
import { decisionBench, processThroughput } from './scale';
import { BENCH_PASSWORD, seedBench, type SeededFleet } from './seed';

const { values: args } = parseArgs({
  options: {
    loggers: { type: 'string', default: '100000' },
    tokens: { type: 'string', default: '2000' },
    requests: { type: 'string', default: '100' },
    warmup: { type: 'string', default: '30' },
    concurrency: { type: 'string', default: '4' },
    'device-concurrency': { type: 'string', default: '16' },
    budget: { type: 'string', default: '30' },
    only: { type: 'string' },
    compare: { type: 'string' },
    with: { type: 'string' },
    out: { type: 'string' },
    explain: { type: 'string', default: '3' },
    'explain-scope': { type: 'string', default: 'fleet' },
    workers: { type: 'string', default: '2' },
    'decision-seconds': { type: 'string', default: '3' },
    pg: { type: 'string', multiple: true },
    'pg-log': { type: 'string' },
  },
  strict: true,
});

const log = (msg: string) => process.stdout.write(`[bench] ${msg}\n`);
const int = (name: string, value: string | undefined, min: number) => {
  const n = Number(value);
  if (!Number.isInteger(n) || n < min) throw new Error(`--${name} must be a whole number of at least ${min}`);
  return n;
};

type Who = 'support' | 'release' | 'device' | 'none';
type Scenario = {
  name: string;
  group: string;
  who: Who;
  /** Runs once before timing (e.g. walks 20 pages to reach a deep cursor); returns the request builder. */
  prepare: () => Promise<(i: number) => Request>;
  options?: Partial<MeasureOptions>;
  /** Fleet-table scenarios are candidates for EXPLAIN. */
  explain?: boolean;
  note?: (m: { bytes: number; wallMs: number; n: number; p50: number }) => { note: string; mbPerS?: number };
};

async function signIn(base: string, email: string): Promise<string> {
  const res = await fetch(`${base}/api/auth/sign-in`, {
    method: 'POST',
    headers: { 'Content-Type': 'application/json' },
    body: JSON.stringify({ email, password: BENCH_PASSWORD }),
  });
  if (res.status !== 200) throw new Error(`sign-in as ${email} failed: ${res.status} ${await res.text()}`);
  const cookie = res.headers.getSetCookie().map((c) => c.split(';')[0]).find((c) => c.startsWith(`${sessionCookie}=`));
  if (!cookie) throw new Error(`sign-in as ${email} set no session cookie`);
  return cookie;
}

async function getJson<T>(base: string, p: string, cookie: string): Promise<T> {
  const res = await fetch(base + p, { headers: { Cookie: cookie } });
  if (res.status !== 200) throw new Error(`GET ${p} → ${res.status} ${(await res.text()).slice(0, 300)}`);
  return (await res.json()) as T;
}

function scenarios(base: string, fleet: SeededFleet, cookies: { support: string; release: string }): Scenario[] {
  const list: Scenario[] = [];
  const get = (cookie: string) => (p: string) => (): Request => ({ path: p, init: { headers: { Cookie: cookie } } });
  const asSupport = get(cookies.support);
  const fixed = (p: string, who: 'support' | 'release' = 'support') => async () => (who === 'support' ? asSupport(p) : get(cookies.release)(p));
  const add = (name: string, group: string, p: string, extra: Partial<Scenario> = {}) =>
    list.push({ name, group, who: 'support', prepare: fixed(p), explain: group === 'fleet table', ...extra });

  add('fleet default sort', 'fleet table', '/api/loggers');
  for (const sort of fleetSortKeys) {
    for (const dir of ['asc', 'desc'] as const) {
      add(`fleet sort=${sort} ${dir} page 1`, 'fleet table', `/api/loggers?sort=${sort}&dir=${dir}`);
      list.push({
        name: `fleet sort=${sort} ${dir} keyset page 21`,
        group: 'fleet table',
        who: 'support',
        explain: true,
        prepare: async () => {
          // Follow nextCursor 20 pages from the start of a keyset walk; time the 21st page.
          let cursor = 'start';
          for (let page = 0; page < 20; page++) {
            const body = await getJson<{ nextCursor?: string }>(base, `/api/loggers?sort=${sort}&dir=${dir}&cursor=${encodeURIComponent(cursor)}`, cookies.support);
            if (!body.nextCursor) throw new Error(`sort=${sort} ${dir}: no page ${page + 2}`);
            cursor = body.nextCursor;
          }
          return asSupport(`/api/loggers?sort=${sort}&dir=${dir}&cursor=${encodeURIComponent(cursor)}`);
        },
      });
    }
  }
  add('fleet filter q=corvenham (site name, 1 village in 12)', 'fleet table', '/api/loggers?q=corvenham');
  add('fleet filter q=FL3-0004 (serial prefix)', 'fleet table', '/api/loggers?q=FL3-0004');
  add('fleet filter flag=low_supply', 'fleet table', '/api/loggers?flag=low_supply');
  add('fleet filter flag=silent', 'fleet table', '/api/loggers?flag=silent');
  add('fleet filter version=>=2.2.0', 'fleet table', `/api/loggers?version=${encodeURIComponent('>=2.2.0')}`);
  add('fleet filter updateState=failed', 'fleet table', '/api/loggers?updateState=failed');
  add('fleet CSV export version=<2.2.0 (~10 %)', 'export', `/api/loggers/export.csv?version=${encodeURIComponent('<2.2.0')}`, {
    options: { warmup: 1, requests: 10, concurrency: 1, minRequests: 3 },
    note: (m) => {
      const mb = m.bytes / m.n / 1e6;
      const mbPerS = mb / (m.p50 / 1000);
      return { note: `${mb.toFixed(2)} MB each, ${mbPerS.toFixed(1)} MB/s at p50`, mbPerS };
    },
  });
  add('fleet versions (version matrix)', 'fleet views', '/api/fleet/versions');
  add('lagging sites', 'fleet views', '/api/fleet/lagging-sites');
  for (const reason of LAGGING_REASONS) add(`lagging sites reason=${reason}`, 'fleet views', `/api/fleet/lagging-sites?reason=${reason}`);
  add('lagging sites CSV export (every site)', 'export', '/api/fleet/lagging-sites/export.csv', {
    options: { warmup: 1, requests: 10, concurrency: 1, minRequests: 3 },
    note: (m) => {
      const mb = m.bytes / m.n / 1e6;
      const mbPerS = mb / (m.p50 / 1000);
      return { note: `${mb.toFixed(2)} MB each, ${mbPerS.toFixed(1)} MB/s at p50`, mbPerS };
    },
  });
  add('overview', 'fleet views', '/api/overview');
  list.push({ name: 'release dashboard (live 2.3.0)', group: 'fleet views', who: 'release', prepare: fixed(`/api/releases/${fleet.liveReleaseId}/dashboard`, 'release') });
  add('logger timeline', 'fleet views', `/api/loggers/${fleet.timelineLoggerId}/timeline`);

  // The device API: each request checks in as the next token-holding logger, with what it runs; quiet
  // (the usual check-in) and with an install report on the live release (locks the release row). Only a
  // logger that was offered the release may report on it (anything else is refused with 409), so the
  // reports come from those loggers, each repeating its report's last state as a logger does when the
  // answer to its previous check-in was lost ('downloading' where it was only offered).
  const reporting = fleet.tokenLoggers.filter((l) => l.liveReport !== null);
  const deviceBody = (i: number, report: boolean) => {
    const from = report ? reporting : fleet.tokenLoggers;
    const l = from[i % from.length];
    return {
      l,
      body: {
        firmware: l.firmware,
        board: l.board,
        security_counter: l.securityCounter,
        uptime_s: 3600 + i,
        reset_reason: 'power_on',
        resets_since_last: 0,
        rssi_dbm: -67,
        free_heap_b: 81234,
        supply_v: 5.04,
        readings: { bus_v: 18.4, current_a: 2.1, power_w: 38.6, energy_wh: 122.5, temp_c: 14.5 },
        config_version: 1,
        ...(report ? { report: { release: fleet.liveReleaseId, state: l.liveReport === 'offered' ? 'downloading' : l.liveReport } } : {}),
      },
    };
  };
  for (const report of [false, true]) {
    list.push({
      name: report ? 'device check-in with reports' : 'device check-in',
      group: 'device API',
      who: 'device',
      options: { concurrency: int('device-concurrency', args['device-concurrency'], 1) },
      prepare: async () => (i: number) => {
        const { l, body } = deviceBody(i, report);
        return {
          path: '/api/device/v1/check-in',
          init: { method: 'POST', headers: { Authorization: `Bearer ${l.token}`, 'Content-Type': 'application/json' }, body: JSON.stringify(body) },
        };
      },
    });
  }
  return list;
}

/** The list's `total` (rows the filter matches), for the table's note; undefined for answers without one. */
async function totalOf(base: string, req: Request): Promise<number | undefined> {
  const res = await fetch(base + req.path, req.init);
  if (!res.headers.get('content-type')?.includes('json')) return undefined;
  const body = (await res.json()) as { total?: unknown };
  return typeof body.total === 'number' ? body.total : undefined;
}

/** The SQL one request runs (as Sequelize logs it, replacements filled in), without the session's user lookup. */
async function capturedSql(sequelize: Sequelize, base: string, req: Request): Promise<string[]> {
  const seen: string[] = [];
  const options = (sequelize as unknown as { options: { logging?: unknown } }).options;
  const before = options.logging;
  options.logging = (msg: string) => seen.push(msg.replace(/^Executing \([^)]*\):\s*/, ''));
  try {
    const res = await fetch(base + req.path, req.init);
    await res.arrayBuffer();
  } finally {
    options.logging = before;
  }
  return seen.filter((sql) => /^\s*(WITH|SELECT)/i.test(sql) && !/FROM "users"/.test(sql) && !/^SELECT 1\b/.test(sql.trim()));
}

const KEY_LINE = /Seq Scan|Parallel Seq|Sort Method|Sort Key|Incremental Sort|Index Scan|Index Only Scan|Bitmap Heap|Rows Removed by Filter|Hash Join|Merge Join|Nested Loop|Limit|Execution Time|Planning Time|external/;

async function explain(url: string, sql: string): Promise<{ plan: string; keyLines: string[] }> {
  const db = new Client({ connectionString: url });
  await db.connect();
  try {
    const r = await db.query<{ 'QUERY PLAN': string }>(`EXPLAIN (ANALYZE, BUFFERS) ${sql.replace(/;\s*$/, '')}`);
    const lines = r.rows.map((x) => x['QUERY PLAN']);
    return { plan: lines.join('\n'), keyLines: lines.filter((l) => KEY_LINE.test(l)).map((l) => l.replace(/\s+$/, '')) };
  } finally {
    await db.end();
  }
}

async function main() {
  if (args.compare && args.with) {
    console.log(compare(readRun(args.compare), readRun(args.with)));
    return 0;
  }
  const loggers = int('loggers', args.loggers, 240);
  const defaults: MeasureOptions = {
    warmup: int('warmup', args.warmup, 0),
    requests: int('requests', args.requests, 1),
    concurrency: int('concurrency', args.concurrency, 1),
    budgetS: int('budget', args.budget, 1),
    minRequests: 20,
  };
  const only = args.only ? new RegExp(args.only, 'i') : null;
  const startedAt = new Date();
  const errors: string[] = [];

  // --pg name=value (repeatable): a PostgreSQL setting for the bench's cluster, e.g. --pg shared_buffers=2GB.
  const pgSettings = Object.fromEntries((args.pg ?? []).map((kv) => {
    const at = kv.indexOf('=');
    if (at < 1) throw new Error(`--pg takes name=value, not ${kv}`);
    return [kv.slice(0, at), kv.slice(at + 1)];
  }));
  log(`starting a throwaway PostgreSQL (fsync off${Object.keys(pgSettings).length ? `, ${Object.entries(pgSettings).map(([k, v]) => `${k}=${v}`).join(', ')}` : ''}) and migrating`);
  const db = await startBenchDatabase(pgSettings, args['pg-log'] ? path.resolve(args['pg-log']) : null);
  const storeDir = fs.mkdtempSync(path.join(os.tmpdir(), 'heliodor-bench-store-'));
  let server: Server | null = null;
  let app: ReturnType<typeof createApp> | null = null;
  try {
    log(`seeding ${loggers} loggers`);
    const seedStarted = Date.now();
    const fleet = await seedBench(db.url, { loggers, tokenLoggers: int('tokens', args.tokens, 1), now: new Date(), dataDir: db.dataDir, storeDir, log });
    const seedSeconds = (Date.now() - seedStarted) / 1000;
    log(`seeded ${fleet.loggers} loggers at ${fleet.sites} sites, ${fleet.installReports} install reports, ${fleet.checkIns} check-ins in ${seedSeconds.toFixed(1)} s`);

    const started = createApp({
      config: appConfig({
        outboxDir: path.join(db.dataDir, 'outbox'),
        storeDir,
        webDir: path.join(db.dataDir, 'no-web-app'),
        // Each token-holding logger checks in several times a minute here; the limit guards real fleets.
        deviceRatePerMinute: 100_000,
      }),
      sequelize: db.sequelize,
      // Nothing listens there: a stop e-mail would fail quietly in the background, never during a timed request.
      mailer: createMailer({ host: '127.0.0.1', port: 9, secure: false, from: 'Heliodor <heliodor@localhost>' }),
      readiness: { migrated: true, seeded: 'complete' },
    });
    app = started;
    // The fleet summaries catch up with the seeded fleet before timing, as a server does within seconds of starting.
    const summaries = (started.services as { summaries?: { tick(): Promise<void> } }).summaries;
    if (summaries) {
      const caughtUp = Date.now();
      await summaries.tick();
      log(`fleet summaries caught up in ${((Date.now() - caughtUp) / 1000).toFixed(1)} s`);
    }
    server = await new Promise<Server>((resolve) => {
      const s = started.listen(0, '127.0.0.1', () => resolve(s));
    });
    const base = `http://127.0.0.1:${(server.address() as { port: number }).port}`;
    const cookies = { support: await signIn(base, fleet.people.support), release: await signIn(base, fleet.people.releaseEngineer) };
    log(`Heliodor at ${base}; signed in as support and as a release engineer`);

    // Baseline: the health check with the same session cookie, so it carries the same middleware and
    // session lookup as every console scenario, plus one trivial query; the ratio is the route's own work.
    // Other work on the machine drifts over a long run, so it is measured at the start, after every ten
    // scenarios and at the end; ratios divide by the median of those p50s.
    const baselineReq = (): Request => ({ path: '/api/health', init: { headers: { Cookie: cookies.support } } });
    const baselines: number[] = [];
    const baselineP95: number[] = [];
    const measureBaseline = async (warmup: number) => {
      const m = await measure(base, baselineReq, { ...defaults, warmup, budgetS: Infinity });
      errors.push(...m.errors);
      baselines.push(m.p50);
      baselineP95.push(m.p95);
      return m;
    };
    const first = await measureBaseline(Math.max(100, defaults.warmup));
    log(`baseline GET /api/health: p50 ${first.p50.toFixed(2)} ms, p95 ${first.p95.toFixed(2)} ms`);
    const results: ScenarioResult[] = [];
    const builders = new Map<string, (i: number) => Request>();
    const all = scenarios(base, fleet, cookies).filter((s) => !only || only.test(s.name));
    const timed: { s: Scenario; m: Awaited<ReturnType<typeof measure>>; concurrency: number; total?: number; rssGrowthMb: number }[] = [];
    for (const [k, s] of all.entries()) {
      if (k > 0 && k % 10 === 0) await measureBaseline(10);
      const build = await s.prepare();
      builders.set(s.name, build);
      const opts = { ...defaults, ...s.options };
      if (s.who === 'device') opts.requests = Math.max(opts.requests, Math.min(4 * opts.requests, fleet.tokenLoggers.length));
      global.gc?.();
      const rssBefore = process.memoryUsage().rss;
      const m = await measure(base, build, opts);
      const rssGrowthMb = (process.memoryUsage().rss - rssBefore) / 1e6;
      errors.push(...m.errors);
      timed.push({ s, m, concurrency: opts.concurrency, total: s.who === 'device' || s.note ? undefined : await totalOf(base, build(0)), rssGrowthMb });
      log(`${s.name}: p50 ${m.p50.toFixed(1)} ms, p95 ${m.p95.toFixed(1)} ms${m.errors.length ? `, ${m.errors.length} errors` : ''}`);
    }
    await measureBaseline(10);
    const sortedBaselines = [...baselines].sort((a, b) => a - b);
    const baselineP50 = sortedBaselines[Math.floor((sortedBaselines.length - 1) / 2)];
    for (const { s, m, concurrency, total, rssGrowthMb } of timed) {
      const extra = s.note?.(m) ?? (total === undefined ? undefined : { note: `${total} match`, mbPerS: undefined });
      results.push({
        name: s.name, group: s.group, n: m.n, concurrency, p50: m.p50, p95: m.p95, mean: m.mean, max: m.max,
        ratio: m.p50 / baselineP50, errors: m.errors.length, ...(extra ? { note: extra.note, ...(extra.mbPerS === undefined ? {} : { mbPerS: extra.mbPerS }) } : {}),
        ...(s.group === 'export' ? { rssGrowthMb } : {}),
      });
    }
    for (const r of results) {
      const verdicts = scenarioGoal(r, baselineP95[0], results);
      r.goals = verdictText(verdicts);
      r.missed = verdicts.some((v) => !v.met);
    }

    // EXPLAIN (ANALYZE, BUFFERS) the SQL behind the slowest fleet-table scenarios.
    const explained: ExplainResult[] = [];
    // One per query shape: a sort key's directions and pages share their plan's shape, so the slowest of each family.
    const family = (name: string) => name.replace(/ (asc|desc) .*$/, '');
    const families = new Set<string>();
    const console_ = (r: ScenarioResult) => r.group !== 'device API';
    const slowest = results
      .filter((r) => (args['explain-scope'] === 'all' ? r.group !== 'device API' && r.group !== 'export' : all.find((s) => s.name === r.name)?.explain))
      .sort((a, b) => b.p50 - a.p50)
      .filter((r) => !families.has(family(r.name)) && families.add(family(r.name)))
      .slice(0, int('explain', args.explain, 0));
    // Every console scenario that misses its goal is EXPLAINed too, not only the slowest few.
    const missed = results.filter((r) => console_(r) && r.missed && !slowest.includes(r));
    for (const r of [...slowest, ...missed]) {
      const sqls = await capturedSql(db.sequelize, base, builders.get(r.name)!(0));
      for (const sql of sqls) {
        const e = await explain(db.url, sql);
        explained.push({ scenario: r.name, p50: r.p50, sql, keyLines: e.keyLines, plan: e.plan });
      }
    }

    // Scale: the offer decision alone, and check-in throughput with one and with several processes.
    const scale: ScaleResult[] = [];
    const checkIn = results.find((r) => r.name === 'device check-in');
    if (!only || only.test('decision') || only.test('device check-in')) {
      const d = await decisionBench(db.sequelize, fleet, int('decision-seconds', args['decision-seconds'], 1));
      scale.push({ name: 'offer decision (releases parsed once, as cached)', figure: `${Math.round(d.parsed).toLocaleString('en')} decisions/s (${(1e6 / d.parsed).toFixed(1)} µs each)` });
      scale.push({ name: 'offer decision (parsing every version and range, as before)', figure: `${Math.round(d.unparsed).toLocaleString('en')} decisions/s (${(1e6 / d.unparsed).toFixed(1)} µs each)` });
      if (checkIn) scale.push({ name: 'beside it, the check-in', figure: `p50 ${checkIn.p50.toFixed(1)} ms at ${checkIn.concurrency} concurrent, ${(checkIn.n / (checkIn.mean * checkIn.n / checkIn.concurrency / 1000)).toFixed(0)} check-ins/s` });
    }
    const workers = int('workers', args.workers, 0);
    if (workers >= 2 && (!only || only.test('workers') || only.test('device check-in'))) {
      const one = await processThroughput(db.url, storeDir, fleet, 1, log);
      const many = await processThroughput(db.url, storeDir, fleet, workers, log);
      errors.push(...one.errors, ...many.errors);
      const r = many.perS / one.perS;
      scale.push({ name: `check-in throughput, HELIODOR_WORKERS=1`, figure: `${one.perS.toFixed(0)} check-ins/s (p50 ${one.p50.toFixed(1)} ms)` });
      scale.push({ name: `check-in throughput, HELIODOR_WORKERS=${workers}`, figure: `${many.perS.toFixed(0)} check-ins/s (p50 ${many.p50.toFixed(1)} ms); ${r.toFixed(2)}× one process`, goal: '≥ 1.6×', met: r >= 1.6 });
    }
    scale.push({ name: `seeding ${fleet.loggers.toLocaleString('en')} loggers`, figure: `${seedSeconds.toFixed(1)} s` });

    const run: BenchRun = {
      scale,
      startedAt: startedAt.toISOString(),
      node: process.version,
      loggers: fleet.loggers,
      sites: fleet.sites,
      checkIns: fleet.checkIns,
      installReports: fleet.installReports,
      seedSeconds,
      seedSteps: fleet.seconds,
      options: { ...defaults, deviceConcurrency: args['device-concurrency'], tokens: fleet.tokenLoggers.length, only: args.only ?? null, cpus: os.cpus().length, pg: pgSettings },
      baseline: { name: 'GET /api/health (with the session cookie)', p50: baselineP50, p95: baselineP95[0], p50s: baselines },
      scenarios: results,
      explain: explained,
      errors,
    };
    console.log('\n' + table(run) + '\n');
    for (const e of explained) {
      console.log(`EXPLAIN (ANALYZE, BUFFERS) — ${e.scenario} (p50 ${e.p50.toFixed(1)} ms):\n  ${e.sql.replace(/\s+/g, ' ').slice(0, 160)}…`);
      console.log(e.keyLines.map((l) => `    ${l}`).join('\n') + '\n');
    }
    const out = args.out ?? path.join(__dirname, 'results', `${startedAt.toISOString().replace(/[:.]/g, '-')}.json`);
    writeRun(run, out);
    log(`results written to ${path.relative(process.cwd(), out)}`);
    if (args.compare) console.log('\n' + compare(readRun(args.compare), run) + '\n');
    if (errors.length) {
      console.error(`${errors.length} requests failed; the first ones:\n  ${errors.slice(0, 10).join('\n  ')}`);
      return 1;
    }
    return 0;
  } finally {
    if (server) {
      server.closeAllConnections();
      await new Promise((r) => server!.close(r));
    }
    await app?.stop();
    await db.close();
    fs.rmSync(storeDir, { recursive: true, force: true });
  }
}

main().then(
  (code) => process.exit(code),
  (err) => {
    console.error(err);
    process.exit(1);
  },
);
