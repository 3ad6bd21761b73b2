// POST /api/device/v1/check-in, the service (DEVICE_API.md). One transaction per check-in:
//   1. the logger's latest state on its row, and one history row in check_ins;
//   2. the install report, if any, applied forward-only, with the release row locked first
//      (SELECT … FOR UPDATE) whenever the report can change the release's figures, so concurrent
//      check-ins serialise on that release and the stop evaluation sees every count exactly once;
//   3. confirmation or rollback of earlier installed reports from the version now running;
//   4. the trip when a threshold is crossed (stop.ts);
//   5. the offer decision (decision.ts) on the cached releases, and 'offered' recorded;
//   6. the measurement profile when the logger's config_version is behind or absent.
// The stop e-mail is sent and the release cache dropped only after the transaction commits.
import type { Sequelize, Transaction } from 'sequelize';
import { QueryTypes } from 'sequelize';
import type pino from 'pino';
import type { CheckInRequest, CheckInResponse, DeviceConfig, Offer, ResetCounts } from '../../schemas/device';
import type { Mailer } from '../mail/mailer';
import type { DeviceLogger } from './auth';
import { decideOffer, type LastInstallReport } from './decision';
import { tripIfCrossed, lockRelease, type TripOutcome } from './trip';
import { nextCheckInSeconds } from './load';
import { retentionDays } from './partitions';
import type { CachedRelease, ReleaseCache } from './release-cache';
import { afterInstalled, applyReport, isFinished, retriedSince, ROLLBACK_DETAIL, type StoredReport, type StoredState } from './reports';

export type CheckInDeps = {
  sequelize: Sequelize;
  releases: ReleaseCache;
  mailer: Mailer;
  logger: pino.Logger;
  now: () => Date;
  random: () => number;
  stretch: () => number;
  /** When the reset rate of each release was last judged at a check-in with resets (ms, by `now`). */
  resetChecks?: Map<string, number>;
};

/** At most one reset-rate evaluation per release and process in this many milliseconds. */
export const RESET_CHECK_EVERY_MS = 60_000;

export type CheckInContext = { ip: string | null; requestId: string | null };

type ReportRow = StoredReport & { releaseId: string; confirmedAt: Date | null };

/** Boots since the previous check-in by reason (DEVICE_API.md `reset_counts`; else resets_since_last under reset_reason). */
export function resetsOf(body: CheckInRequest): ResetCounts | null {
  if (body.reset_counts) {
    const entries = Object.entries(body.reset_counts).filter(([, n]) => typeof n === 'number' && n > 0);
    return Object.fromEntries(entries);
  }
  if (body.resets_since_last !== undefined) {
    return body.resets_since_last > 0 ? { [body.reset_reason ?? 'unknown']: body.resets_since_last } : {};
  }
  return null;
}

export function imageUrl(sha256: string): string {
  return `/api/device/v1/images/${sha256}`;
}

export function offerOf(r: CachedRelease): Offer {
  return {
    release: r.id,
    version: r.version,
    security_counter: r.securityCounter,
    manifest: r.manifest.toString('base64'),
    signature: r.signature.toString('base64'),
    key_id: r.keyId,
    algorithm: r.algorithm,
    image: { url: imageUrl(r.imageSha256), sha256: r.imageSha256, size: r.imageSize },
  };
}

async function reportsOf(sequelize: Sequelize, t: Transaction, loggerId: string): Promise<ReportRow[]> {
  const rows = await sequelize.query<ReportRow>(
    `SELECT release_id AS "releaseId", state, reason, updated_at AS "updatedAt", retried_at AS "retriedAt", confirmed_at AS "confirmedAt"
       FROM install_reports WHERE logger_id = :loggerId`,
    { transaction: t, type: QueryTypes.SELECT, replacements: { loggerId } },
  );
  return rows.map((r) => ({ ...r, updatedAt: new Date(r.updatedAt), retriedAt: r.retriedAt ? new Date(r.retriedAt) : null }));
}

async function profileOf(sequelize: Sequelize, t: Transaction, loggerId: string): Promise<DeviceConfig | null> {
  const [p] = await sequelize.query<DeviceConfig>(
    `SELECT version, shunt_ohm, max_current_a, current_lsb_a, calibration, power_lsb_w, bus_v_max::float8 AS bus_v_max,
            temp_resolution_bits, sample_interval_s
       FROM measurement_profiles WHERE logger_id = :loggerId ORDER BY version DESC LIMIT 1`,
    { transaction: t, type: QueryTypes.SELECT, replacements: { loggerId } },
  );
  if (!p) return null;
  return {
    version: Number(p.version),
    shunt_ohm: Number(p.shunt_ohm),
    max_current_a: Number(p.max_current_a),
    current_lsb_a: Number(p.current_lsb_a),
    calibration: Number(p.calibration),
    power_lsb_w: Number(p.power_lsb_w),
    bus_v_max: Number(p.bus_v_max),
    temp_resolution_bits: Number(p.temp_resolution_bits),
    sample_interval_s: Number(p.sample_interval_s),
  };
}

export async function checkIn(deps: CheckInDeps, logger: DeviceLogger, body: CheckInRequest, ctx: CheckInContext): Promise<CheckInResponse> {
  const { sequelize } = deps;
  const now = deps.now();
  const releases = await deps.releases.get(logger.modelId);
  const byId = new Map(releases.map((r) => [r.id, r]));
  const stops: TripOutcome[] = [];

  const result = await sequelize.transaction(async (t) => {
    // 1. Latest state and history.
    const [updated] = await sequelize.query<{ supplyV: number | null }>(
      `UPDATE loggers SET firmware = :firmware, reported_board = :board, security_counter = :securityCounter,
              supply_v = COALESCE(:supplyV, supply_v), readings = COALESCE(CAST(:readings AS jsonb), readings), last_ip = :ip,
              rssi_dbm = COALESCE(:rssi, rssi_dbm), free_heap_b = COALESCE(:heap, free_heap_b), uptime_s = COALESCE(:uptime, uptime_s),
              config_version = COALESCE(:configVersion, config_version), last_reset_reason = COALESCE(:resetReason, last_reset_reason),
              last_seen_at = :now, last_check_in_at = :now, check_in_count = check_in_count + 1, updated_at = :now
        WHERE id = :id RETURNING supply_v AS "supplyV"`,
      {
        transaction: t,
        type: QueryTypes.SELECT,
        replacements: {
          id: logger.id,
          firmware: body.firmware,
          board: body.board,
          securityCounter: body.security_counter,
          supplyV: body.supply_v ?? null,
          readings: body.readings ? JSON.stringify(body.readings) : null,
          ip: ctx.ip,
          rssi: body.rssi_dbm ?? null,
          heap: body.free_heap_b ?? null,
          uptime: body.uptime_s ?? null,
          configVersion: body.config_version ?? null,
          resetReason: body.reset_reason ?? null,
          now,
        },
      },
    );
    const resets = resetsOf(body);
    await sequelize.query(
      `INSERT INTO check_ins (logger_id, at, firmware, board, security_counter, supply_v, readings, reset_reason, resets, rssi_dbm, free_heap_b, uptime_s, config_version, ip)
       VALUES (:id, :now, :firmware, :board, :securityCounter, :supplyV, CAST(:readings AS jsonb), :resetReason, CAST(:resets AS jsonb), :rssi, :heap, :uptime, :configVersion, :ip)`,
      {
        transaction: t,
        replacements: {
          id: logger.id,
          now,
          firmware: body.firmware,
          board: body.board,
          securityCounter: body.security_counter,
          supplyV: body.supply_v ?? null,
          readings: body.readings ? JSON.stringify(body.readings) : null,
          resetReason: body.reset_reason ?? null,
          resets: resets ? JSON.stringify(resets) : null,
          rssi: body.rssi_dbm ?? null,
          heap: body.free_heap_b ?? null,
          uptime: body.uptime_s ?? null,
          configVersion: body.config_version ?? null,
          ip: ctx.ip,
        },
      },
    );

    // 2–4. Reports, confirmation, rollback, stop. Each release whose figures may change is locked first.
    let rows = await reportsOf(sequelize, t, logger.id);
    const report = body.report;
    const reportRelease = report ? byId.get(report.release) : undefined;
    const pending = rows.filter((r) => r.state === 'installed' && r.confirmedAt === null && byId.has(r.releaseId));
    const touched = new Set<string>();
    if (report && reportRelease) touched.add(reportRelease.id);
    for (const r of pending) touched.add(r.releaseId);

    if (touched.size > 0) {
      // Lock in a fixed order (by id), so two check-ins touching the same releases cannot deadlock.
      const locked = new Map<string, NonNullable<Awaited<ReturnType<typeof lockRelease>>>>();
      for (const id of [...touched].sort()) {
        const l = await lockRelease(sequelize, t, id);
        if (l) locked.set(id, l);
      }
      const finished = new Set<string>();

      if (report && reportRelease && locked.has(reportRelease.id)) {
        const [row] = await sequelize.query<ReportRow>(
          `SELECT release_id AS "releaseId", state, reason, updated_at AS "updatedAt", retried_at AS "retriedAt", confirmed_at AS "confirmedAt"
             FROM install_reports WHERE logger_id = :loggerId AND release_id = :releaseId FOR UPDATE`,
          { transaction: t, type: QueryTypes.SELECT, replacements: { loggerId: logger.id, releaseId: reportRelease.id } },
        );
        const stored = row ? { ...row, updatedAt: new Date(row.updatedAt), retriedAt: row.retriedAt ? new Date(row.retriedAt) : null } : null;
        const change = applyReport(stored, report.state, report.reason ?? null);
        if (change.apply) {
          const detail = change.state === 'failed' ? (report.detail ?? null) : null;
          const finishedAt = change.state === 'installed' || change.state === 'failed' ? now : null;
          await sequelize.query(
            `INSERT INTO install_reports (logger_id, release_id, state, reason, detail, offered_at, updated_at, finished_at, confirmed_at)
             VALUES (:loggerId, :releaseId, :state, :reason, :detail, :now, :now, :finishedAt, NULL)
             ON CONFLICT (logger_id, release_id) DO UPDATE SET state = EXCLUDED.state, reason = EXCLUDED.reason, detail = EXCLUDED.detail,
               updated_at = EXCLUDED.updated_at, finished_at = EXCLUDED.finished_at,
               confirmed_at = CASE WHEN :newAttempt THEN NULL ELSE install_reports.confirmed_at END`,
            {
              transaction: t,
              replacements: {
                loggerId: logger.id,
                releaseId: reportRelease.id,
                state: change.state,
                reason: change.reason,
                detail,
                now,
                finishedAt,
                newAttempt: change.newAttempt,
              },
            },
          );
          if (isFinished(change.state, change.reason)) finished.add(reportRelease.id);
        }
      }

      // Confirmation and rollback of installed reports, now that this check-in says what runs.
      rows = await reportsOf(sequelize, t, logger.id);
      for (const r of rows) {
        if (r.state !== 'installed' || r.confirmedAt !== null || !locked.has(r.releaseId)) continue;
        const rel = locked.get(r.releaseId)!;
        const reportedNow = report?.release === r.releaseId && report.state === 'installed';
        const outcome = afterInstalled(body.firmware, rel.version, reportedNow);
        if (outcome === 'confirmed') {
          await sequelize.query('UPDATE install_reports SET confirmed_at = :now WHERE logger_id = :loggerId AND release_id = :releaseId', {
            transaction: t,
            replacements: { now, loggerId: logger.id, releaseId: r.releaseId },
          });
          finished.add(r.releaseId); // the reset-rate cohort grew
        } else if (outcome === 'rolled_back') {
          await sequelize.query(
            `UPDATE install_reports SET state = 'failed', reason = 'other', detail = :detail, updated_at = :now, finished_at = :now
              WHERE logger_id = :loggerId AND release_id = :releaseId`,
            { transaction: t, replacements: { detail: ROLLBACK_DETAIL, now, loggerId: logger.id, releaseId: r.releaseId } },
          );
          finished.add(r.releaseId);
        }
      }

      for (const id of finished) {
        const stop = await tripIfCrossed(sequelize, t, locked.get(id)!, { now, retentionDays: retentionDays(), requestId: ctx.requestId });
        if (stop) stops.push(stop);
      }
      rows = await reportsOf(sequelize, t, logger.id);
    }

    // 4b. Watchdog and brown-out resets on a release this logger confirmed: judge the release's reset rate.
    const resetsNow = (resets?.watchdog ?? 0) + (resets?.brownout ?? 0);
    if (resetsNow > 0 && deps.resetChecks) {
      const running = releases.find(
        (r) => r.version === body.firmware && ['pilot', 'widening', 'complete'].includes(r.state) && rows.some((x) => x.releaseId === r.id && x.confirmedAt !== null),
      );
      const last = running ? deps.resetChecks.get(running.id) : undefined;
      if (running && !stops.some((h) => h.release.id === running.id) && (last === undefined || now.getTime() - last >= RESET_CHECK_EVERY_MS)) {
        deps.resetChecks.set(running.id, now.getTime());
        // SKIP LOCKED: another check-in holding the release is judging it already, and waiting here in
        // another lock order could deadlock with it.
        const locked = await lockRelease(sequelize, t, running.id, { skipLocked: true });
        const stop = locked ? await tripIfCrossed(sequelize, t, locked, { now, retentionDays: retentionDays(), requestId: ctx.requestId }) : null;
        if (stop) stops.push(stop);
      }
    }

    // 5. The offer, on the releases as this transaction left them (a stop just made applies now).
    const current = releases.map((r) => {
      const h = stops.find((x) => x.release.id === r.id);
      return h ? { ...r, state: h.release.state, share: h.release.share, resumeState: h.release.resumeState } : r;
    });
    const lastReports: Record<string, LastInstallReport | undefined> = {};
    for (const r of rows) {
      if (r.state === 'offered' || retriedSince(r)) continue;
      lastReports[r.releaseId] = { state: r.state as Exclude<StoredState, 'offered'>, reason: (r.reason as LastInstallReport['reason']) ?? null };
    }
    const decision = decideOffer({
      logger: {
        id: logger.id,
        status: logger.status,
        siteId: logger.siteId,
        board: body.board,
        channel: logger.channel,
        firmware: body.firmware,
        securityCounter: body.security_counter,
        supplyV: updated?.supplyV === null || updated?.supplyV === undefined ? null : Number(updated.supplyV),
        minUpdateSupplyV: logger.minUpdateSupplyV,
        siteCoordinates: logger.latitude !== null && logger.longitude !== null ? { latitude: logger.latitude, longitude: logger.longitude } : null,
      },
      releases: current,
      lastReports,
      now,
    });
    if (decision.offer) {
      await sequelize.query(
        `INSERT INTO install_reports (logger_id, release_id, state, offered_at, updated_at) VALUES (:loggerId, :releaseId, 'offered', :now, :now)
         ON CONFLICT (logger_id, release_id) DO NOTHING`,
        { transaction: t, replacements: { loggerId: logger.id, releaseId: decision.offer.id, now } },
      );
    }

    // 6. The measurement profile when the logger runs an older one (or does not say).
    let config: DeviceConfig | null = null;
    const profile = await profileOf(sequelize, t, logger.id);
    if (profile && (body.config_version === undefined || body.config_version < profile.version)) config = profile;

    return { offer: decision.offer ? offerOf(decision.offer) : null, config };
  });

  for (const h of stops) {
    deps.releases.invalidate(h.release.modelId);
    deps.mailer.send(h.mail).catch((err) => deps.logger.error({ err, releaseId: h.release.id }, 'stop e-mail not sent'));
    deps.logger.warn({ releaseId: h.release.id, reason: h.reason }, 'release tripped');
  }

  return {
    server_time: now.toISOString().replace(/\.\d{3}Z$/, 'Z'),
    next_check_in_s: nextCheckInSeconds(logger.checkInIntervalS, deps.random(), deps.stretch()),
    config: result.config,
    offer: result.offer,
  };
}
