// POST /api/device/v1/check-in, the story (DEVICE_API.md). One transaction per check-in, in this order:
//   1. count the check-in against the per-logger rate limit (shared by every process, in PostgreSQL) and,
//      within it, record the visit: the logger's latest state on its row, one history row in check_ins,
//      what the logger has (its install reports, its measurement profile), and its readings when the
//      logger's first-readings check still waits for them — one statement; over the limit nothing else
//      is written and the answer is 429 with Retry-After; the first-readings check is judged when it
//      has its readings (server/loggers/commissioning.ts);
//   2. settle the report, applied forward-only (rollout/reports.ts), and the installs the running
//      version now confirms or rolls back — then lock each release whose figures these writes changed
//      (SELECT … FOR UPDATE, in id order), so the check-ins that change a release's figures serialise
//      on it and the trip rules see every count exactly once; a check-in that changed none locks none;
//   3. judge the trip rules on those releases, and the reset rate when the logger brings watchdog or
//      brown-out resets on a release it confirmed (once a minute per release and process), and the
//      measurement drift when it brings readings on one (once in ten minutes per release and process) —
//      these two read with the release unlocked, and lock it to judge again only when they trip;
//   4. decide the offer (rollout/decision.ts) on the cached releases as this transaction left them,
//      and record it;
//   5. answer: the offer, and the measurement profile when the logger's is older (or unknown);
//   6. and, outside the transaction, the next version of the model's trust set when the logger sent an
//      older trust_version and that next version is signed (server/keys/trust-sets.ts).
// The queries are named in checkin-store.ts. A trip is written by the one writer of transitions
// (server/releases/transitions.ts), which mails and drops the release caches once this commits.
import type { Sequelize, Transaction } from 'sequelize';
import type pino from 'pino';
import semver from 'semver';
import type { CheckInRequest, CheckInResponse, DeviceConfig, Offer } from '../../schemas/device';
import { problems } from '../http/problem';
import { COUNTED_RESET_REASONS } from '../../schemas/words';
import { systemContext } from '../auth/actor';
import type { Release } from '../db/models';
import type { Mailer } from '../mail/mailer';
import { judgeTrip, tripVerdict } from '../releases/trip';
import type { TransitionContext } from '../releases/transitions';
import { decideOffer, offerInput, type LoggerFacts } from '../rollout/decision';
import { checkInDay } from '../rollout/drift';
import { isLive } from '../rollout/lifecycle';
import { afterInstalled, applyReport, isFinished } from '../rollout/reports';
import type { DeviceLogger } from './auth';
import { judgeFirstReadings } from '../loggers/commissioning';
import { checkInStore, resetsOf, type CheckInStore, type ReportRow } from './checkin-store';
import { nextCheckInSeconds } from './load';
import { nextTrustSetFor } from '../keys/trust-sets';
import type { CachedRelease, ReleaseCache } from './release-cache';

export type CheckInDeps = {
  sequelize: Sequelize;
  releases: ReleaseCache;
  mailer: Mailer;
  logger: pino.Logger;
  now: () => Date;
  random: () => number;
  stretch: () => number;
  /** The per-logger rate limit, check-ins a minute (HELIODOR_DEVICE_RATE). */
  ratePerMinute: number;
  /** Where an offer's image is fetched from (the image store: a path on this server, or a presigned URL). */
  imageUrl: (sha256: string) => Promise<string> | string;
  /** When the reset rate of each release was last judged at a check-in with resets (ms, by `now`). */
  resetChecks?: Map<string, number>;
  /** When the measurement drift of each release was last judged at a check-in with readings (ms, by `now`). */
  driftChecks?: Map<string, number>;
};

/** At most one reset-rate evaluation per release and process in this many milliseconds. */
export const RESET_CHECK_EVERY_MS = 60_000;
/**
 * At most one measurement-drift evaluation per release and process in this many milliseconds: the rule
 * reads whole days of every logger the release reached, and its figures change once a day.
 */
export const DRIFT_CHECK_EVERY_MS = 10 * 60_000;

export type CheckInContext = { ip: string | null; requestId: string | null };

export async function checkIn(deps: CheckInDeps, logger: DeviceLogger, body: CheckInRequest, ctx: CheckInContext): Promise<CheckInResponse> {
  const now = deps.now();
  const releases = await deps.releases.get(logger.modelId);
  const answer = await deps.sequelize.transaction(async (t) => {
    const store = checkInStore(deps.sequelize, t, logger.id, now);
    // 1. Count the check-in and, within the rate limit, record the visit and its part of the logger's day
    //    for the measurement-drift trip (the limit's minutes are wall-clock minutes).
    const spot = logger.latitude !== null && logger.longitude !== null ? { latitude: logger.latitude, longitude: logger.longitude } : null;
    const day = checkInDay({ now, lastCheckInAt: logger.lastCheckInAt, uptimeS: body.uptime_s ?? null, spot, tempC: body.readings?.temp_c ?? null, energyWh: body.readings?.energy_wh ?? null });
    const visit = await store.recordVisit(logger, body, ctx.ip, { perMinute: deps.ratePerMinute, now: new Date() }, day);
    if ('refused' in visit) return visit;
    if (visit.firstReadings && visit.profile) {
      const profile = { version: visit.profile.version, currentLsbA: visit.profile.current_lsb_a, powerLsbW: visit.profile.power_lsb_w };
      await judgeFirstReadings(deps.sequelize, t, logger, profile, visit.firstReadings, now, systemContext(ctx.requestId));
    }
    // 2. Settle the report, and the installs the running version confirms or rolls back.
    const settled = await settleReports(store, releases, visit.reports, body);
    // 3. Judge the trip rules.
    const judge: TransitionContext = { ...systemContext(ctx.requestId), now, mailer: deps.mailer, log: deps.logger };
    const tripped = await judgeTrips(deps, t, store, settled, releases, body, judge);
    // 4. Decide the offer on the releases as this transaction left them (a trip just made applies now).
    const facts: LoggerFacts = {
      ...logger,
      board: body.board,
      firmware: body.firmware,
      securityCounter: body.security_counter,
      // The supply guard judges the voltage this check-in reports, as sent (the logger row keeps it
      // rounded to millivolts); without one, the latest on record.
      supplyV: body.supply_v ?? visit.supplyV,
    };
    const decision = decideOffer(offerInput(facts, asLeft(releases, tripped), [...settled.reports.values()], now));
    if (decision.offer) await store.recordOffer(decision.offer.id);
    // 5. Answer.
    return { offer: decision.offer ?? null, config: profileToSend(visit.profile, body.config_version) };
  });
  // Over the limit: the count is kept (committed), nothing else was written.
  if ('refused' in answer) throw problems.tooManyRequests(answer.retryAfterS);
  // 6. The next trust set, when the logger holds an older one and the next is signed (one step per check-in).
  const trustSet = body.trust_version === undefined ? null : await nextTrustSetFor(deps.sequelize, logger.modelId, body.trust_version);
  return {
    server_time: now.toISOString().replace(/\.\d{3}Z$/, 'Z'),
    next_check_in_s: nextCheckInSeconds(logger.checkInIntervalS, deps.random(), deps.stretch()),
    config: answer.config,
    offer: answer.offer ? offerOf(answer.offer, await deps.imageUrl(answer.offer.imageSha256)) : null,
    ...(trustSet ? { trust_set: trustSet } : {}),
  };
}

// ─── The steps ──────────────────────────────────────────────────────────────

type Settled = {
  /** This logger's reports by release, as this transaction leaves them. */
  reports: Map<string, ReportRow>;
  /** The releases whose figures this check-in changed (a finished install, a confirmation or a rollback), locked. */
  changed: Map<string, Release>;
};

async function settleReports(store: CheckInStore, releases: CachedRelease[], stored: ReportRow[], body: CheckInRequest): Promise<Settled> {
  const reports = new Map(stored.map((r) => [r.releaseId, r]));
  const cached = new Map(releases.map((r) => [r.id, r]));
  const report = body.report;
  // A report counts only for a release offered to this logger (its report row exists, whatever this
  // process's release cache holds yet) or the release it runs; anything else is refused, and the
  // transaction rolls back the visit with it.
  if (report && !reports.has(report.release)) {
    const release = cached.get(report.release);
    if (!release || !runs(body.firmware, release.version)) throw notOffered(report.release);
  }
  const finished = new Set<string>();

  if (report) {
    const change = applyReport(await store.reportForUpdate(report.release), report.state, report.reason ?? null);
    if (change.apply) {
      reports.set(report.release, await store.writeReport(report.release, change, change.state === 'failed' ? (report.detail ?? null) : null));
      if (isFinished(change.state, change.reason)) finished.add(report.release);
    }
  }
  // Installed reports not yet confirmed, now that this check-in says what runs (a version never changes,
  // so the cached release tells it).
  for (const r of [...reports.values()]) {
    const release = cached.get(r.releaseId);
    if (r.state !== 'installed' || r.confirmedAt !== null || !release) continue;
    const reportedNow = body.report?.release === r.releaseId && body.report.state === 'installed';
    const outcome = afterInstalled(body.firmware, release.version, reportedNow);
    if (outcome === 'pending') continue;
    reports.set(r.releaseId, outcome === 'confirmed' ? await store.confirmInstall(r.releaseId) : await store.markRolledBack(r.releaseId));
    finished.add(r.releaseId); // a confirmation grows the reset-rate cohort; a rollback is a failure
  }
  // Only now, and only the releases whose figures this check-in changed, are locked: the trip rules on
  // them must see every finished install once. A check-in that changed nothing (a report repeating its
  // state, a download in progress) takes no lock, so it never waits behind another logger's check-in.
  return { reports, changed: await store.lockReleases(finished) };
}

/** Whether the logger runs this release's version (semver precedence: build metadata aside). */
function runs(firmware: string, version: string): boolean {
  return semver.valid(firmware) !== null && semver.valid(version) !== null && semver.eq(firmware, version);
}

/** A report about a release this logger was never offered and does not run: 409, nothing recorded. */
function notOffered(releaseId: string) {
  return problems.conflict(
    `Release ${releaseId} was not offered to this logger and is not the version it runs, so its install report is refused and nothing was recorded. Drop the report and check in again without it.`,
    { release: releaseId },
  );
}

/** The trip rules on every release whose figures changed, then the reset rate of the release the logger runs. */
async function judgeTrips(
  deps: CheckInDeps,
  t: Transaction,
  store: CheckInStore,
  settled: Settled,
  releases: CachedRelease[],
  body: CheckInRequest,
  judge: TransitionContext,
): Promise<Release[]> {
  const tripped: Release[] = [];
  for (const release of settled.changed.values()) {
    const stopped = await judgeTrip(deps.sequelize, t, release, judge);
    if (stopped) tripped.push(stopped);
  }

  // On a live release this logger confirmed: watchdog and brown-out resets judge the release's reset
  // rate, readings its measurement drift, each at most once per interval per release and process.
  const resets = resetsOf(body);
  const counted = COUNTED_RESET_REASONS.reduce((n, reason) => n + (resets?.[reason] ?? 0), 0);
  const running = releases.find((r) => r.version === body.firmware && isLive(r.state) && settled.reports.get(r.id)?.confirmedAt);
  if (!running || tripped.some((r) => r.id === running.id)) return tripped;
  const now = judge.now.getTime();
  const due = (checks: Map<string, number> | undefined, everyMs: number) => {
    if (!checks) return false;
    const last = checks.get(running.id);
    if (last !== undefined && now - last < everyMs) return false;
    checks.set(running.id, now);
    return true;
  };
  const resetDue = counted > 0 && due(deps.resetChecks, RESET_CHECK_EVERY_MS);
  const driftDue = body.readings !== undefined && due(deps.driftChecks, DRIFT_CHECK_EVERY_MS);
  if (!resetDue && !driftDue) return tripped;
  // The reset rate and the drift read the history of every logger the release reached, the longest reads of
  // any check-in on a large fleet, so they are read with the release unlocked: check-ins that finish installs
  // meanwhile do not wait for them. Only a verdict that trips locks the release and judges again, so the
  // stop is decided on the figures as they stand under the lock. SKIP LOCKED: another check-in holding the
  // release is judging it already, and waiting here in another lock order could deadlock with it.
  const current = await store.release(running.id);
  const verdict = current ? await tripVerdict(deps.sequelize, t, current, judge.now, { drift: driftDue }) : null;
  if (!verdict?.trip) return tripped;
  const locked = await store.lockReleaseIfFree(running.id);
  const stopped = locked ? await judgeTrip(deps.sequelize, t, locked, judge, { drift: driftDue }) : null;
  if (stopped) tripped.push(stopped);
  return tripped;
}

/** The cached releases with the trips this transaction made. */
function asLeft(releases: CachedRelease[], tripped: Release[]): CachedRelease[] {
  return releases.map((r) => {
    const stopped = tripped.find((x) => x.id === r.id);
    return stopped ? { ...r, state: stopped.state, share: stopped.share, resumeState: stopped.resumeState } : r;
  });
}

function profileToSend(profile: DeviceConfig | null, running: number | undefined): DeviceConfig | null {
  return profile && (running === undefined || running < profile.version) ? profile : null;
}

function offerOf(r: CachedRelease, url: string): Offer {
  return {
    release: r.id,
    version: r.version,
    security_counter: r.securityCounter,
    manifest: r.manifest.toString('base64'),
    signature: r.signature.toString('base64'),
    key_id: r.keyId,
    algorithm: r.algorithm,
    signatures: r.signatures,
    image: { url, sha256: r.imageSha256, size: r.imageSize },
  };
}
