// The rollout soak, shared by `npm run test:soak` (2 000 loggers, a 15 s outage) and its fast variant
// in `npm test` (tests/api/soak.test.ts: 200 loggers, 5 s). What it does:
//
// 1. A Heliodor of its own (environment.ts): its own PostgreSQL cluster, the small Fernhollow
//    scenario, the server as its own process.
// 2. Morgan (admin) registers a signing key and the loggers (POST /api/loggers/batch, then one
//    POST /api/enrollments each, as the bench sheet and the label would); Priya (release engineer)
//    uploads a signed release, targets it and moves it pilot → widen 25 % → complete through the
//    console API (scripts/simulator/fleet.ts ConsoleSession).
// 3. The loggers are the simulator's virtual loggers (scripts/simulator/logger.ts, the reference
//    client of DEVICE_API.md) on a clock running `speed` times faster than the wall clock, with the
//    given share of installs failing. While the widening stage is under way PostgreSQL is stopped
//    (pg_ctl stop -m fast) for the outage's length and started again on the same data folder.
// 4. Every answer the loggers get is counted (status, and for 503 whether Retry-After came with it,
//    RFC 9110 §15.6.4 and §10.2.3), the server's resident memory is sampled every second, and the
//    ledger of what the server acknowledged — each check-in answered 200, each install report that
//    rode in one — is compared with the database once the fleet is quiet: check-in history rows and
//    the logger's check-in count, the version on record, each logger's install report and its
//    confirmation, and the release's counts. Nothing acknowledged may be missing, nothing counted twice.
//
// The rate limit is scaled with the clock (HELIODOR_DEVICE_RATE = 60 × speed), so a logger's budget per
// simulated minute is the production default; Retry-After is obeyed in simulated seconds, so during the
// outage the loggers come back `speed` times sooner than real loggers would — a harder test, not an easier one.
import crypto from 'node:crypto';
import type { Sequelize } from 'sequelize';
import { QueryTypes } from 'sequelize';
import { acceleratedClock, buildFleet, ConsoleSession, FleetTally, registerFleet, runFleet, type RegisteredLogger } from '../../scripts/simulator/fleet';
import type { InstallReport, LoggerEvent, VirtualLogger } from '../../scripts/simulator/logger';
import { seededRandom } from '../../scripts/simulator/random';
import { canonicalManifest, parsePublicKeyPem, signManifest } from '../../server/images/manifest';
import { TRANSIENT_FAILURE_REASONS } from '../../schemas/words';
import { SOAK_PASSWORD, rssOf, startSoakEnvironment, type OutageKind, type SoakEnvironment, type SoakServer } from './environment';

/** Work to do against the same server once the rollout is checked (the malformed requests of `npm run test:soak`). */
export type Afterwards = (server: SoakServer, targets: { token: string; ids: string[] }) => Promise<void>;

export type SoakOptions = {
  loggers: number;
  /** Simulated seconds per real second. */
  speed: number;
  /** Length of the database outage, real seconds. */
  outageS: number;
  /** Share of installs that fail while writing the image (integrity, storage or other: permanent). */
  failRate: number;
  /** Share of download attempts cut short (resumed with Range). */
  interruptRate: number;
  seed: number;
  /** Loggers talking to the server at once. */
  concurrency: number;
  /**
   * Real seconds without progress (no logger newly settled) after which the soak gives up on a stage. Progress, however slow on a busy machine, keeps it going: the soak judges
   * what was lost, not how fast the server was (that is `npm run bench`'s work).
   */
  stallS: number;
  /** How the database goes away (environment.ts). */
  outageKind: OutageKind;
  log?: (line: string) => void;
};

export const FROM_VERSION = '2.2.0';
export const VERSION = '2.3.0';
const CHECK_IN_INTERVAL_S = 900; // the demo model's interval (server/db/seed/scenario.ts)
const SERIAL_PREFIX = 'FL2-SOAK';

type Phase = 'before' | 'outage' | 'after';
const PHASES: readonly Phase[] = ['before', 'outage', 'after'];

/** What the loggers saw, by phase of the run and kind of request. */
export type Answers = Record<Phase, { checkIns: Record<string, number>; images: Record<string, number> }>;

export type StageFigures = { stage: string; seconds: number; onNewVersion: number; failed: number };

export type SoakReport = {
  options: Omit<SoakOptions, 'log'>;
  seconds: number;
  stages: StageFigures[];
  outage: { seconds: number; firstAcknowledgedAfterS: number | null } | null;
  answers: Answers;
  /** 503 answers without Retry-After, and 5xx answers other than 503 (with a sample of what they said). */
  badAnswers: { status: number; path: string; body: string }[];
  ledger: { checkIns: number; reports: number; installed: number; failed: number; failedByReason: Record<string, number> };
  database: { checkInRows: number; checkInCount: number; installed: number; confirmed: number; failed: number };
  lost: string[];
  countedTwice: string[];
  unfinished: string[];
  rss: { atS: number; mb: number }[];
  outageWindowS: [number, number] | null;
  problems: string[];
  tally: FleetTally['counts'];
};

const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, Math.max(1, ms)));

/** Every answer to the loggers' requests, counted by phase, kind and status (503 split by Retry-After). */
class AnswerLog {
  phase: Phase = 'before';
  readonly answers: Answers = { before: { checkIns: {}, images: {} }, outage: { checkIns: {}, images: {} }, after: { checkIns: {}, images: {} } };
  readonly bad: SoakReport['badAnswers'] = [];
  /** When each logger's latest check-in request left (wall ms), by token. */
  readonly checkInSentAt = new Map<string, number>();

  readonly fetch: typeof fetch = async (input, init) => {
    const url = new URL(input instanceof Request ? input.url : String(input));
    const kind = url.pathname.endsWith('/check-in') ? 'checkIns' : 'images';
    const auth = new Headers(init?.headers).get('authorization') ?? '';
    if (kind === 'checkIns') this.checkInSentAt.set(auth.replace(/^Bearer /, ''), Date.now());
    let res: Response;
    try {
      res = await globalThis.fetch(input, init);
    } catch (error) {
      this.count(kind, 'no answer');
      throw error;
    }
    const retryAfter = res.headers.get('retry-after');
    const key = res.status === 503 || res.status === 429 ? `${res.status}${retryAfter ? ' + Retry-After' : ' without Retry-After'}` : String(res.status);
    this.count(kind, key);
    if ((res.status >= 500 && res.status !== 503) || (res.status === 503 && !retryAfter)) {
      const body = this.bad.length < 10 ? (await res.clone().text()).slice(0, 300) : '';
      this.bad.push({ status: res.status, path: url.pathname, body });
    }
    return res;
  };

  private count(kind: 'checkIns' | 'images', key: string) {
    const bucket = this.answers[this.phase][kind];
    bucket[key] = (bucket[key] ?? 0) + 1;
  }
}

/** What the server acknowledged to each logger: check-ins answered 200 and the install reports they carried. */
class Ledger {
  checkIns = new Map<string, number>();
  last = new Map<string, { sentAt: number; offer: boolean; firmware: string; ackAt: number }>();
  reports = new Map<string, InstallReport>();
  reportCount = 0;
  firstAckAfter: number | null = null;
  watchFrom: number | null = null;
  /** Errors on the loggers' side other than a check-in that got no answer at all. */
  otherErrors: string[] = [];

  constructor(
    private readonly bySerial: Map<string, VirtualLogger>,
    private readonly sentAt: Map<string, number>,
  ) {}

  onEvent = (event: LoggerEvent): void => {
    if (event.kind === 'error' && !event.message.endsWith('check-in failed: fetch failed')) this.otherErrors.push(event.message);
    if (event.kind === 'report' && event.delivered) {
      this.reports.set(event.serial, event.report);
      this.reportCount += 1;
    }
    if (event.kind === 'check-in' && event.status === 200) {
      const logger = this.bySerial.get(event.serial)!;
      const now = Date.now();
      this.checkIns.set(event.serial, (this.checkIns.get(event.serial) ?? 0) + 1);
      this.last.set(event.serial, { sentAt: this.sentAt.get(logger.token) ?? 0, offer: event.offer, firmware: logger.firmware, ackAt: now });
      if (this.watchFrom !== null && this.firstAckAfter === null && now >= this.watchFrom) this.firstAckAfter = now;
    }
  };

  /**
   * The logger is done with the release as far as this stage goes: a check-in sent after `since` was
   * answered without an offer, nothing is waiting to be reported and no reboot is pending.
   */
  settled(logger: VirtualLogger, since: number): boolean {
    const last = this.last.get(logger.serial);
    return !!last && last.sentAt > since && !last.offer && logger.pendingReport === null && logger.awaitingReboot === null;
  }
}

/** Samples the server's resident memory once a second. */
class RssSampler {
  readonly samples: { at: number; bytes: number }[] = [];
  private timer: NodeJS.Timeout | null = null;
  constructor(private readonly pid: number) {}
  start() {
    const take = () => {
      const bytes = rssOf(this.pid);
      if (bytes !== null) this.samples.push({ at: Date.now(), bytes });
    };
    take();
    this.timer = setInterval(take, 1000);
  }
  stop() {
    if (this.timer) clearInterval(this.timer);
  }
}

type DbRow = { serial: string; firmware: string | null; check_in_count: number; rows: number; state: string | null; reason: string | null; confirmed: boolean };

async function readDatabase(sequelize: Sequelize, releaseId: string): Promise<DbRow[]> {
  return sequelize.query<DbRow>(
    `SELECT l.serial, l.firmware, l.check_in_count::int AS check_in_count, COALESCE(h.n, 0)::int AS rows,
            ir.state, ir.reason, ir.confirmed_at IS NOT NULL AS confirmed
       FROM loggers l
       LEFT JOIN (SELECT logger_id, count(*) AS n FROM check_ins GROUP BY logger_id) h ON h.logger_id = l.id
       LEFT JOIN install_reports ir ON ir.logger_id = l.id AND ir.release_id = :releaseId
      WHERE l.serial LIKE :prefix`,
    { type: QueryTypes.SELECT, replacements: { releaseId, prefix: `${SERIAL_PREFIX}-%` } },
  );
}

const transient = (reason: string | undefined) => (TRANSIENT_FAILURE_REASONS as readonly string[]).includes(reason ?? 'other');

export async function runRolloutSoak(options: SoakOptions, afterwards?: Afterwards): Promise<SoakReport> {
  const log = options.log ?? (() => undefined);
  const began = Date.now();
  const problems: string[] = [];
  const env: SoakEnvironment = await startSoakEnvironment({ deviceRatePerMinute: 60 * options.speed, outageKind: options.outageKind, log });
  const rss = new RssSampler(env.server.pid);
  rss.start();
  const answers = new AnswerLog();
  const tally = new FleetTally();
  let outageWindow: [number, number] | null = null;
  let outage: SoakReport['outage'] = null;
  const stages: StageFigures[] = [];
  try {
    log(`ready in ${((Date.now() - began) / 1000).toFixed(1)} s`);
    const base = env.server.base;
    // Morgan registers the key and the loggers; Priya ships the release (PRODUCT.md's people).
    const morgan = new ConsoleSession(base);
    await morgan.signIn('morgan@fernhollow.example', SOAK_PASSWORD);
    const priya = new ConsoleSession(base);
    await priya.signIn('priya@fernhollow.example', SOAK_PASSWORD);
    const pair = crypto.generateKeyPairSync('ed25519');
    const privatePem = String(pair.privateKey.export({ type: 'pkcs8', format: 'pem' }));
    const publicPem = String(pair.publicKey.export({ type: 'spki', format: 'pem' }));
    await morgan.request('POST', '/api/keys', { name: 'Fernhollow soak key', publicKeyPem: publicPem });
    const models = (await morgan.request<{ rows: { id: string; name: string }[] }>('GET', '/api/models')).rows;
    const model = models.find((m) => m.name === 'FL-2 field logger');
    if (!model) throw new Error('the seeded scenario has no FL-2 field logger model');
    const sites = (await morgan.request<{ rows: { id: string; name: string }[] }>('GET', '/api/sites')).rows;

    const random = seededRandom(options.seed);
    log(`registering and enrolling ${options.loggers} loggers through the console API`);
    const identities: RegisteredLogger[] = await registerFleet(morgan, {
      count: options.loggers, model: model.id, boards: ['B', 'C'], firmware: () => FROM_VERSION, random, serialPrefix: SERIAL_PREFIX, concurrency: 8,
    });

    log(`fleet registered at ${((Date.now() - began) / 1000).toFixed(1)} s`);
    // The release: 2.3.0 for boards B and C from 2.1.0 on, signed; one pilot site; no daylight window
    // (the soak runs at any hour); trip point raised so the soak's own 3 % failures and the outage's
    // failed downloads (connection, retried) do not stop it — the trip rule has tests of its own.
    const image = crypto.randomBytes(48 * 1024 + 13);
    const manifest = canonicalManifest({
      board_revisions: ['B', 'C'], format: 1, image_sha256: crypto.createHash('sha256').update(image).digest('hex'), image_size: image.length,
      issued_at: new Date().toISOString().replace(/\.\d{3}Z$/, 'Z'), model: model.id, security_counter: 1, version: VERSION,
    });
    const form = new FormData();
    form.append('image', new Blob([image], { type: 'application/octet-stream' }), 'fl2-2.3.0.bin');
    form.append('manifest', new Blob([manifest], { type: 'application/json' }), 'manifest.json');
    form.append('signature', signManifest(manifest, privatePem));
    const releaseId = (await priya.request<{ id: string }>('POST', '/api/releases', form)).id;
    const pilotSite = sites.find((s) => s.name === 'Aldmere Village Hall') ?? sites[0];
    await priya.request('PATCH', `/api/releases/${releaseId}`, {
      boards: ['B', 'C'], upgradeFrom: '>=2.1.0', pilotSiteIds: [pilotSite.id], daylightWindow: false, tripFailureRatio: 0.2,
    });

    // The fleet, on a clock `speed` times faster than the wall clock, first check-ins spread over one interval.
    const clock = acceleratedClock(new Date(), options.speed);
    const bySerial = new Map<string, VirtualLogger>();
    const ledger = new Ledger(bySerial, answers.checkInSentAt);
    const count = tally.onEvent;
    tally.onEvent = (event) => {
      count(event);
      ledger.onEvent(event);
    };
    const loggers = buildFleet(
      identities,
      {
        baseUrl: base, fetch: answers.fetch, clock, random, trustedKeys: [parsePublicKeyPem(publicPem)],
        failRate: options.failRate, interruptRate: options.interruptRate, spreadS: CHECK_IN_INTERVAL_S,
      },
      tally,
    );
    for (const l of loggers) bySerial.set(l.serial, l);
    let stop = false;
    const fleetRun = runFleet(loggers, {
      clock,
      until: new Date(clock().getTime() + 365 * 86_400_000),
      concurrency: options.concurrency,
      tally,
      waitUntil: (at) => sleep(Math.min(250, (at.getTime() - clock().getTime()) / options.speed)),
      pause: () => sleep(50),
      onStep: () => stop,
    });

    const onVersion = () => loggers.filter((l) => l.firmware === VERSION).length;
    const failedFinally = () => loggers.filter((l) => ledger.reports.get(l.serial)?.state === 'failed' && !transient(ledger.reports.get(l.serial)?.reason)).length;
    const move = async (body: Record<string, unknown>) => {
      await priya.request('POST', `/api/releases/${releaseId}/transitions`, body);
      return Date.now();
    };
    const settle = async (stage: string, since: number) => {
      let progressAt = Date.now();
      let fewest = Infinity;
      for (;;) {
        const open = loggers.filter((l) => !ledger.settled(l, since));
        if (open.length === 0) break;
        if (env.server.exited()) throw new Error(`the server stopped (${env.server.exited()}):\n${env.server.tail()}`);
        if (open.length < fewest) {
          fewest = open.length;
          progressAt = Date.now();
        }
        if (Date.now() - progressAt > options.stallS * 1000) {
          const describe = (l: VirtualLogger) => {
            const last = ledger.last.get(l.serial);
            const report = ledger.reports.get(l.serial);
            return `${l.serial} runs ${l.firmware}; last acknowledged check-in ${last ? `${((Date.now() - last.ackAt) / 1000).toFixed(1)} s ago, sent ${last.sentAt > since ? 'after' : 'before'} the stage began, ${last.offer ? 'with' : 'without'} an offer` : 'none'}; ` +
              `last report ${report ? `${report.state}${report.reason ? ` (${report.reason})` : ''}` : 'none'}; pending ${l.pendingReport?.state ?? 'nothing'}; ` +
              `${l.awaitingReboot ? `awaiting reboot into ${l.awaitingReboot}; ` : ''}next check-in in ${((l.nextCheckInAt.getTime() - clock().getTime()) / 1000 / options.speed).toFixed(1)} s`;
          };
          problems.push(`stage ${stage}: ${open.length} loggers had not settled, and nothing moved for ${options.stallS} s, e.g.\n    ${open.slice(0, 3).map(describe).join('\n    ')}`);
          break;
        }
        await sleep(250);
      }
      const figures = { stage, seconds: (Date.now() - since) / 1000, onNewVersion: onVersion(), failed: failedFinally() };
      stages.push(figures);
      log(`${stage}: ${figures.onNewVersion} on ${VERSION}, ${figures.failed} failed, ${figures.seconds.toFixed(1)} s · ${tally.line()}`);
    };

    // Pilot.
    await settle('pilot', await move({ action: 'start_pilot' }));
    // Widen to 25 %; once the widening is under way, the database goes away for the outage's length.
    const widenedAt = await move({ action: 'widen', share: 25 });
    await sleep(((CHECK_IN_INTERVAL_S / options.speed) * 1000) / 5);
    log(`database outage: ${options.outageKind === 'pg_ctl' ? 'pg_ctl stop -m fast' : 'every connection reset and refused'}, ${options.outageS} s`);
    answers.phase = 'outage';
    const window = await env.outage(options.outageS);
    answers.phase = 'after';
    ledger.watchFrom = window.backAt;
    outageWindow = [(window.stoppedAt - began) / 1000, (window.backAt - began) / 1000];
    await settle('widen 25 % (outage)', widenedAt);
    outage = { seconds: (window.backAt - window.stoppedAt) / 1000, firstAcknowledgedAfterS: ledger.firstAckAfter === null ? null : (ledger.firstAckAfter - window.backAt) / 1000 };
    // Complete.
    await settle('complete', await move({ action: 'complete' }));
    stop = true;
    await fleetRun;
    if (env.server.exited()) throw new Error(`the server stopped (${env.server.exited()}):\n${env.server.tail()}`);

    // The ledger against the database.
    const lost: string[] = [];
    const countedTwice: string[] = [];
    const unfinished: string[] = [];
    const sequelize = env.connect();
    let rows: DbRow[];
    let counts: { installed: number; failed: number };
    try {
      rows = await readDatabase(sequelize, releaseId);
      counts = (await priya.request<{ counts: { installed: number; failed: number } }>('GET', `/api/releases/${releaseId}`)).counts;
    } finally {
      await sequelize.close();
    }
    const db = new Map(rows.map((r) => [r.serial, r]));
    const ledgerFigures = { checkIns: 0, reports: ledger.reportCount, installed: 0, failed: 0, failedByReason: {} as Record<string, number> };
    const dbFigures = { checkInRows: 0, checkInCount: 0, installed: 0, confirmed: 0, failed: 0 };
    const compare = (serial: string, what: string, acknowledged: number, stored: number) => {
      if (stored < acknowledged) lost.push(`${serial}: ${what} ${acknowledged} acknowledged, ${stored} stored`);
      if (stored > acknowledged) countedTwice.push(`${serial}: ${what} ${acknowledged} acknowledged, ${stored} stored`);
    };
    for (const l of loggers) {
      const r = db.get(l.serial);
      const acked = ledger.checkIns.get(l.serial) ?? 0;
      const report = ledger.reports.get(l.serial);
      const last = ledger.last.get(l.serial);
      ledgerFigures.checkIns += acked;
      if (report?.state === 'installed') ledgerFigures.installed += 1;
      if (report?.state === 'failed') {
        ledgerFigures.failed += 1;
        ledgerFigures.failedByReason[report.reason ?? 'other'] = (ledgerFigures.failedByReason[report.reason ?? 'other'] ?? 0) + 1;
      }
      if (!r) {
        lost.push(`${l.serial}: the logger is not in the database`);
        continue;
      }
      dbFigures.checkInRows += r.rows;
      dbFigures.checkInCount += r.check_in_count;
      if (r.state === 'installed') dbFigures.installed += 1;
      if (r.confirmed) dbFigures.confirmed += 1;
      if (r.state === 'failed') dbFigures.failed += 1;
      compare(l.serial, 'check-in history rows', acked, r.rows);
      compare(l.serial, 'check-in count', acked, r.check_in_count);
      if (last && r.firmware !== last.firmware) lost.push(`${l.serial}: last acknowledged check-in ran ${last.firmware}, the database says ${r.firmware}`);
      if (report && (r.state !== report.state || (report.state === 'failed' && r.reason !== (report.reason ?? 'other')))) {
        lost.push(`${l.serial}: last acknowledged report ${report.state}${report.reason ? ` (${report.reason})` : ''}, the database says ${r.state}${r.reason ? ` (${r.reason})` : ''}`);
      }
      const confirmedByLedger = report?.state === 'installed' && last?.firmware === VERSION;
      if (confirmedByLedger !== r.confirmed) lost.push(`${l.serial}: install ${confirmedByLedger ? 'confirmed by a check-in on' : 'not confirmed on'} ${VERSION}, the database says ${r.confirmed ? 'confirmed' : 'not confirmed'}`);
      const done = (l.firmware === VERSION && confirmedByLedger) || (report?.state === 'failed' && !transient(report.reason));
      if (!done) unfinished.push(`${l.serial}: runs ${l.firmware}, last report ${report ? report.state : 'none'}`);
    }
    // The release's counts (GET /api/releases/:id) are what the console and the trip rule read.
    if (counts.installed !== ledgerFigures.installed) (counts.installed < ledgerFigures.installed ? lost : countedTwice).push(`release counts: installed ${counts.installed}, acknowledged ${ledgerFigures.installed}`);
    if (counts.failed !== ledgerFigures.failed) (counts.failed < ledgerFigures.failed ? lost : countedTwice).push(`release counts: failed ${counts.failed}, acknowledged ${ledgerFigures.failed}`);

    for (const bad of answers.bad) problems.push(`a logger was answered ${bad.status}${bad.status === 503 ? ' without Retry-After' : ''} on ${bad.path}${bad.body ? `: ${bad.body}` : ''}`);
    if (lost.length) problems.push(`${lost.length} acknowledged records missing from the database`);
    if (countedTwice.length) problems.push(`${countedTwice.length} records counted more than once`);
    if (unfinished.length) problems.push(`${unfinished.length} loggers neither run ${VERSION} nor failed for good`);
    // A request that got no answer at all (fetch failed: a keep-alive connection closed under it on a
    // busy machine) is what a logger retries at its next check-in; it is counted in the table, and the
    // ledger shows whether anything it carried was lost. Every other error on the loggers' side fails the soak.
    const otherErrors = ledger.otherErrors;
    if (otherErrors.length > 0) problems.push(`errors on the loggers' side other than a lost connection (first: ${otherErrors[0]})`);
    const total503 = (['checkIns', 'images'] as const).reduce((n, k) => n + Object.entries(answers.answers.outage[k]).filter(([s]) => s.startsWith('503')).reduce((a, [, v]) => a + v, 0), 0);
    if (total503 === 0) problems.push('no logger was answered 503 during the outage: the outage did not reach the loggers');

    if (afterwards) {
      await afterwards(env.server, { token: identities[0].token, ids: [releaseId, identities[0].id, identities[0].siteId, model.id] });
      if (env.server.exited()) problems.push(`the server stopped after the rollout (${env.server.exited()}):\n${env.server.tail()}`);
    }
    const { log: _log, ...rest } = options;
    return {
      options: rest,
      seconds: (Date.now() - began) / 1000,
      stages,
      outage,
      answers: answers.answers,
      badAnswers: answers.bad,
      ledger: ledgerFigures,
      database: dbFigures,
      lost,
      countedTwice,
      unfinished,
      rss: rss.samples.map((s) => ({ atS: (s.at - began) / 1000, mb: s.bytes / 1048576 })),
      outageWindowS: outageWindow,
      problems,
      tally: tally.counts,
    };
  } finally {
    rss.stop();
    await env.close();
  }
}

// ─── The summary ────────────────────────────────────────────────────────────

const fmt = (n: number) => n.toLocaleString('en-GB');

function answerLine(bucket: Record<string, number>): string {
  const entries = Object.entries(bucket).sort(([a], [b]) => a.localeCompare(b));
  return entries.length ? entries.map(([k, v]) => `${k} × ${fmt(v)}`).join(', ') : 'none';
}

/** Resident memory at a few points: start, peak, before/after the outage, end. */
function rssLines(report: SoakReport): string[] {
  const s = report.rss;
  if (s.length === 0) return ['  server RSS        not sampled'];
  const at = (t: number) => s.reduce((best, x) => (Math.abs(x.atS - t) < Math.abs(best.atS - t) ? x : best), s[0]);
  const peak = s.reduce((a, b) => (b.mb > a.mb ? b : a), s[0]);
  const points = [
    ['first sample', s[0]],
    ...(report.outageWindowS ? [['database stopped', at(report.outageWindowS[0])], ['database back', at(report.outageWindowS[1])]] : []),
    ['peak', peak],
    ['last sample', s[s.length - 1]],
  ] as [string, { atS: number; mb: number }][];
  const step = Math.max(1, Math.ceil(s.length / 12));
  const series = s.filter((_, i) => i % step === 0).map((x) => `${x.atS.toFixed(0)} s ${x.mb.toFixed(0)}`).join(' · ');
  return [
    `  server RSS        ${points.map(([name, x]) => `${name} ${x.mb.toFixed(0)} MB (${x.atS.toFixed(0)} s)`).join(', ')}`,
    `  RSS over time     ${series} (MB)`,
  ];
}

export function summaryTable(report: SoakReport): string {
  const o = report.options;
  const a = report.answers;
  const lines = [
    '',
    `Soak: ${fmt(o.loggers)} loggers, pilot → widen 25 % → complete, ${(o.failRate * 100).toFixed(0)} % failed installs, ${o.outageS} s database outage (${report.seconds.toFixed(0)} s in all, clock ×${o.speed})`,
    '',
    ...report.stages.map((s) => `  ${s.stage.padEnd(18)}${fmt(s.onNewVersion)} on ${VERSION}, ${fmt(s.failed)} failed for good, settled in ${s.seconds.toFixed(1)} s`),
    `  check-ins         ${fmt(report.ledger.checkIns)} acknowledged · ${fmt(report.database.checkInRows)} history rows · ${fmt(report.database.checkInCount)} by the loggers' counts`,
    `  install reports   ${fmt(report.ledger.reports)} acknowledged; last states: installed ${fmt(report.ledger.installed)} (database ${fmt(report.database.installed)}, confirmed ${fmt(report.database.confirmed)}), failed ${fmt(report.ledger.failed)} (database ${fmt(report.database.failed)}; ${answerLine(report.ledger.failedByReason)})`,
    `  outage            ${report.outage ? `${report.outage.seconds.toFixed(1)} s without PostgreSQL (${o.outageKind === 'pg_ctl' ? 'pg_ctl stop -m fast, then start' : 'connections reset and refused'}); first check-in acknowledged ${report.outage.firstAcknowledgedAfterS === null ? 'never' : `${report.outage.firstAcknowledgedAfterS.toFixed(1)} s`} after it was back` : 'did not happen'}`,
    ...PHASES.map((p) => `  ${`${p === 'outage' ? 'during' : p} the outage`.padEnd(18)}check-ins: ${answerLine(a[p].checkIns)}; images: ${answerLine(a[p].images)}`),
    `  loggers' side     ${fmt(report.tally.backoffs)} back-offs (429/503 + Retry-After), ${fmt(report.tally.interruptions)} downloads resumed, ${fmt(report.tally.errors)} errors`,
    ...rssLines(report),
    `  lost              ${report.lost.length === 0 ? 'nothing' : fmt(report.lost.length)}`,
    `  counted twice     ${report.countedTwice.length === 0 ? 'nothing' : fmt(report.countedTwice.length)}`,
    `  5xx other than 503, or 503 without Retry-After: ${report.badAnswers.length === 0 ? 'none' : fmt(report.badAnswers.length)}`,
    ...report.lost.slice(0, 10).map((l) => `    lost: ${l}`),
    ...report.countedTwice.slice(0, 10).map((l) => `    twice: ${l}`),
    ...report.unfinished.slice(0, 10).map((l) => `    unfinished: ${l}`),
    ...report.problems.map((p) => `  PROBLEM: ${p}`),
    '',
  ];
  return lines.join('\n');
}
