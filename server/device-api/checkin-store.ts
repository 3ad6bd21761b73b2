// The check-in's named queries, all inside the check-in's transaction (the story is checkin.ts). Every
// value, word lists included, reaches the database as a replacement (:name), never as text in the SQL.
import type { Sequelize, Transaction } from 'sequelize';
import { QueryTypes } from 'sequelize';
import type { CheckInRequest, DeviceConfig, ResetCounts } from '../../schemas/device';
import { lockRelease, readRelease } from '../releases/transitions';
import type { Release } from '../db/models';
import { ROLLBACK_DETAIL, type ReportChange } from '../rollout/reports';
import type { ReportFacts } from '../rollout/decision';
import type { FailureReason, InstallState, LoggerStatus } from '../../schemas/words';
import type { DeviceLogger } from './auth';
import { FIRST_READINGS_COUNTED, firstReadingOf } from '../../lib/commissioning';
import type { CountedReadings } from '../loggers/commissioning';
import type { CheckInDay } from '../rollout/drift';

/** One install report of this logger as stored. */
export type ReportRow = ReportFacts & { confirmedAt: Date | null };

/**
 * What recording a visit tells: the supply the logger row now holds, its reports and its latest profile; and,
 * when this check-in's readings were counted for the first-readings check, the readings counted so far with the
 * panel and site figures the check needs (server/loggers/commissioning.ts).
 */
export type Visit = { supplyV: number | null; reports: ReportRow[]; profile: DeviceConfig | null; firstReadings: CountedReadings | null };

/** The per-logger rate limit: check-ins a minute, counted from the wall clock `now`. */
export type RateWindow = { perMinute: number; now: Date };
/** Over the rate limit: nothing was recorded; try again after this many seconds (the window's end). */
export type RateRefusal = { refused: true; retryAfterS: number };
/** The rate limit's window: one minute from the first check-in counted in it. */
export const RATE_WINDOW_MS = 60_000;

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

const REPORT_COLUMNS = `release_id AS "releaseId", state, reason, updated_at AS "updatedAt", retried_at AS "retriedAt", confirmed_at AS "confirmedAt"`;

type RawReport = Omit<ReportRow, 'updatedAt' | 'retriedAt' | 'confirmedAt'> & { updatedAt: Date | string; retriedAt: Date | string | null; confirmedAt: Date | string | null };

const dateOrNull = (d: Date | string | null) => (d === null ? null : new Date(d));
const toReport = (r: RawReport): ReportRow => ({ ...r, updatedAt: new Date(r.updatedAt), retriedAt: dateOrNull(r.retriedAt), confirmedAt: dateOrNull(r.confirmedAt) });

type RawProfile = Record<keyof DeviceConfig, number | string>;

function toProfile(p: RawProfile | null): DeviceConfig | null {
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

const OFFERED: InstallState = 'offered';
const ENROLLED: LoggerStatus = 'enrolled';
const FAILED: InstallState = 'failed';
/** A rollback is a failure nobody can name better than other. */
const ROLLED_BACK_REASON: FailureReason = 'other';

export type CheckInStore = ReturnType<typeof checkInStore>;

/** The queries of one check-in by one logger, in transaction `t`, at `now`. */
export function checkInStore(sequelize: Sequelize, t: Transaction, loggerId: string, now: Date) {
  const select = <T extends object>(sql: string, replacements: Record<string, unknown>) =>
    sequelize.query<T>(sql, { transaction: t, type: QueryTypes.SELECT, replacements: { loggerId, now, ...replacements } });

  return {
    /**
     * One statement: the per-logger rate limit's count (device_check_in_windows, shared by every process),
     * and — only when the check-in is within the limit — the logger's latest state on its row, one history
     * row in check_ins, its day's sums in logger_days (the measurement-drift trip: the energy since the
     * previous check-in, read from the row as it was before this statement, with the clear-sky energy of
     * the same interval), and what the logger has: its install reports and its latest measurement profile.
     * `rate` is the wall-clock window (the limit counts real minutes even where the clock is injected).
     */
    async recordVisit(logger: DeviceLogger, body: CheckInRequest, ip: string | null, rate: RateWindow, day: CheckInDay): Promise<Visit | RateRefusal> {
      const resets = resetsOf(body);
      // The first-readings check (started at enrollment) counts readings made under the latest profile while it has
      // no verdict; a newer profile starts its readings over. Without a running check the update touches no row.
      const countsReadings = Boolean(body.readings) && logger.status === ENROLLED && body.config_version !== undefined;
      const [row] = await select<{ rateCount: number; windowEnds: Date | string; supplyV: number | null; reports: RawReport[]; profile: RawProfile | null; firstReadings: CountedReadings | null }>(
        `WITH rate AS (
           INSERT INTO device_check_in_windows AS w (logger_id, window_ends, count) VALUES (:loggerId, :windowEnds, 1)
           ON CONFLICT (logger_id) DO UPDATE SET
             count = CASE WHEN w.window_ends <= :rateNow THEN 1 ELSE w.count + 1 END,
             window_ends = CASE WHEN w.window_ends <= :rateNow THEN EXCLUDED.window_ends ELSE w.window_ends END
           RETURNING count, window_ends
         ),
         admitted AS (SELECT 1 FROM rate WHERE count <= :rateLimit),
         before AS (
           SELECT (readings->>'energy_wh')::float8 AS energy_wh, last_check_in_at FROM loggers WHERE id = :loggerId
         ),
         since_last AS (
           SELECT CASE WHEN CAST(:energyWh AS float8) IS NULL OR b.energy_wh IS NULL OR CAST(:since AS timestamptz) IS NULL
                            OR b.last_check_in_at IS DISTINCT FROM CAST(:since AS timestamptz) THEN NULL
                       WHEN :rebooted OR CAST(:energyWh AS float8) < b.energy_wh THEN CAST(:energyWh AS float8)
                       ELSE CAST(:energyWh AS float8) - b.energy_wh END AS energy_wh
             FROM before b
         ),
         day AS (
           INSERT INTO logger_days AS d (logger_id, day, firmware, energy_wh, clear_sky_wh, temp_excess_sum_c, temp_readings, probe_readings, probe_flagged, check_ins)
           SELECT :loggerId, CAST(:day AS date), :firmware, COALESCE(c.energy_wh, 0), CASE WHEN c.energy_wh IS NULL THEN 0 ELSE CAST(:clearSkyWh AS float8) END,
                  COALESCE(CAST(:tempExcess AS float8), 0), CASE WHEN CAST(:tempExcess AS float8) IS NULL THEN 0 ELSE 1 END, :probeReadings, :probeFlagged, 1
             FROM since_last c
            WHERE EXISTS (SELECT 1 FROM admitted)
           ON CONFLICT (logger_id, day, firmware) DO UPDATE SET
             energy_wh = d.energy_wh + EXCLUDED.energy_wh, clear_sky_wh = d.clear_sky_wh + EXCLUDED.clear_sky_wh,
             temp_excess_sum_c = d.temp_excess_sum_c + EXCLUDED.temp_excess_sum_c, temp_readings = d.temp_readings + EXCLUDED.temp_readings,
             probe_readings = d.probe_readings + EXCLUDED.probe_readings, probe_flagged = d.probe_flagged + EXCLUDED.probe_flagged,
             check_ins = d.check_ins + 1
         ),
         visit AS (
           UPDATE loggers SET firmware = :firmware, reported_board = :board, security_counter = :securityCounter,
                  supply_v = COALESCE(:supplyV, supply_v), readings = COALESCE(CAST(:readings AS jsonb), readings), last_ip = :ip,
                  rssi_dbm = COALESCE(:rssi, rssi_dbm), free_heap_b = COALESCE(:heap, free_heap_b), uptime_s = COALESCE(:uptime, uptime_s),
                  config_version = COALESCE(:configVersion, config_version), last_reset_reason = COALESCE(:resetReason, last_reset_reason),
                  last_seen_at = :now, last_check_in_at = :now, check_in_count = check_in_count + 1, updated_at = :now
            WHERE id = :loggerId AND EXISTS (SELECT 1 FROM admitted) RETURNING supply_v
         ),
         history AS (
           INSERT INTO check_ins (logger_id, at, firmware, board, security_counter, supply_v, readings, reset_reason, resets, rssi_dbm, free_heap_b, uptime_s, config_version, ip)
           SELECT CAST(:loggerId AS uuid), CAST(:now AS timestamptz), CAST(:firmware AS text), CAST(:board AS text), CAST(:securityCounter AS bigint),
                  CAST(:supplyV AS numeric), CAST(:readings AS jsonb), CAST(:resetReason AS text), CAST(:resets AS jsonb), CAST(:rssi AS integer),
                  CAST(:heap AS bigint), CAST(:uptime AS bigint), CAST(:configVersion AS integer), CAST(:ip AS text)
            WHERE EXISTS (SELECT 1 FROM admitted)
         ),
         counted AS (
           UPDATE commissioning_checks c
              SET readings = CASE WHEN c.profile_version = :configVersion THEN c.readings ELSE '[]'::jsonb END || jsonb_build_array(CAST(:firstReading AS jsonb)),
                  started_at = CASE WHEN c.profile_version = :configVersion THEN c.started_at ELSE :now END,
                  profile_version = :configVersion, updated_at = :now
            WHERE c.logger_id = :loggerId AND :countsReadings AND c.judged_at IS NULL AND EXISTS (SELECT 1 FROM admitted)
              AND (c.profile_version <> :configVersion OR jsonb_array_length(c.readings) < :firstReadingsCounted)
              AND :configVersion = (SELECT max(version) FROM measurement_profiles WHERE logger_id = :loggerId)
           RETURNING readings
         )
         SELECT (SELECT count FROM rate) AS "rateCount", (SELECT window_ends FROM rate) AS "windowEnds",
                (SELECT supply_v::float8 FROM visit) AS "supplyV",
                (SELECT COALESCE(json_agg(json_build_object('releaseId', release_id, 'state', state, 'reason', reason, 'updatedAt', updated_at,
                                                            'retriedAt', retried_at, 'confirmedAt', confirmed_at)), '[]'::json)
                   FROM install_reports WHERE logger_id = :loggerId AND EXISTS (SELECT 1 FROM admitted)) AS reports,
                (SELECT row_to_json(p) FROM (
                   SELECT version, shunt_ohm, max_current_a, current_lsb_a, calibration, power_lsb_w, bus_v_max::float8 AS bus_v_max,
                          temp_resolution_bits, sample_interval_s
                     FROM measurement_profiles WHERE logger_id = :loggerId AND EXISTS (SELECT 1 FROM admitted) ORDER BY version DESC LIMIT 1) p) AS profile,
                (SELECT json_build_object('readings', k.readings, 'panelVocV', l.install->'panelVocV', 'vocTempCoeffPctPerC', l.install->'vocTempCoeffPctPerC',
                                          'siteMinTempC', s.min_temp_c)
                   FROM counted k, loggers l LEFT JOIN sites s ON s.id = l.site_id WHERE l.id = :loggerId) AS "firstReadings"`,
        {
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
          ip,
          rateNow: rate.now,
          windowEnds: new Date(rate.now.getTime() + RATE_WINDOW_MS),
          rateLimit: rate.perMinute,
          countsReadings,
          firstReading: countsReadings ? JSON.stringify(firstReadingOf(now.toISOString(), body.readings!)) : null,
          firstReadingsCounted: FIRST_READINGS_COUNTED,
          day: day.day,
          since: day.since,
          rebooted: day.rebooted,
          energyWh: body.readings?.energy_wh ?? null,
          clearSkyWh: day.clearSkyWh,
          tempExcess: day.tempExcessC,
          probeReadings: day.probeReadings,
          probeFlagged: day.probeFlagged,
        },
      );
      if (Number(row.rateCount) > rate.perMinute) {
        const retryAfterS = Math.max(1, Math.ceil((new Date(row.windowEnds).getTime() - rate.now.getTime()) / 1000));
        return { refused: true, retryAfterS };
      }
      const supplyV = row?.supplyV ?? logger.supplyV;
      return {
        supplyV: supplyV === null ? null : Number(supplyV),
        reports: (row?.reports ?? []).map(toReport),
        profile: toProfile(row?.profile ?? null),
        firstReadings: row?.firstReadings ?? null,
      };
    },

    /** Locks the releases in a fixed order (by id), so two check-ins touching the same releases cannot deadlock. */
    async lockReleases(ids: Iterable<string>): Promise<Map<string, Release>> {
      const locked = new Map<string, Release>();
      for (const id of [...new Set(ids)].sort()) {
        const release = await lockRelease(t, id);
        if (release) locked.set(id, release);
      }
      return locked;
    },

    /** A release as it stands, not locked (null: no such release). */
    release: (id: string) => readRelease(t, id),

    /** Locks one release unless another transaction holds it (null then: that one is judging it already). */
    lockReleaseIfFree: (id: string) => lockRelease(t, id, { skipLocked: true }),

    /** This logger's report of a release, locked for this transaction (null: none yet). */
    async reportForUpdate(releaseId: string): Promise<ReportRow | null> {
      const [row] = await select<RawReport>(`SELECT ${REPORT_COLUMNS} FROM install_reports WHERE logger_id = :loggerId AND release_id = :releaseId FOR UPDATE`, { releaseId });
      return row ? toReport(row) : null;
    },

    /**
     * Writes a reported state that moves the report forward (a new attempt clears the confirmation). A
     * report about an offered release finds its row; a new row is a report about the release the logger
     * runs without an offer, so it keeps no offer time (and its image stays unoffered).
     */
    async writeReport(releaseId: string, change: Extract<ReportChange, { apply: true }>, detail: string | null): Promise<ReportRow> {
      const finished = change.state === 'installed' || change.state === FAILED;
      const [row] = await select<RawReport>(
        `INSERT INTO install_reports (logger_id, release_id, state, reason, detail, offered_at, updated_at, finished_at, confirmed_at)
         VALUES (:loggerId, :releaseId, :state, :reason, :detail, NULL, :now, :finishedAt, NULL)
         ON CONFLICT (logger_id, release_id) DO UPDATE SET state = EXCLUDED.state, reason = EXCLUDED.reason, detail = EXCLUDED.detail,
           updated_at = EXCLUDED.updated_at, finished_at = EXCLUDED.finished_at,
           confirmed_at = CASE WHEN :newAttempt THEN NULL ELSE install_reports.confirmed_at END
         RETURNING ${REPORT_COLUMNS}`,
        { releaseId, state: change.state, reason: change.reason, detail, finishedAt: finished ? now : null, newAttempt: change.newAttempt },
      );
      return toReport(row);
    },

    /** The logger runs the installed release: the install is confirmed. */
    async confirmInstall(releaseId: string): Promise<ReportRow> {
      const [row] = await select<RawReport>(
        `UPDATE install_reports SET confirmed_at = :now WHERE logger_id = :loggerId AND release_id = :releaseId RETURNING ${REPORT_COLUMNS}`,
        { releaseId },
      );
      return toReport(row);
    },

    /** The logger still runs an older version after reporting installed: the bootloader rolled back. */
    async markRolledBack(releaseId: string): Promise<ReportRow> {
      const [row] = await select<RawReport>(
        `UPDATE install_reports SET state = :failed, reason = :reason, detail = :detail, updated_at = :now, finished_at = :now
          WHERE logger_id = :loggerId AND release_id = :releaseId RETURNING ${REPORT_COLUMNS}`,
        { releaseId, failed: FAILED, reason: ROLLED_BACK_REASON, detail: ROLLBACK_DETAIL },
      );
      return toReport(row);
    },

    /**
     * The offer made: the report row starts as offered. An existing row keeps its state and its first
     * offer time; one written by a report without an offer gets its offer time now.
     */
    async recordOffer(releaseId: string): Promise<void> {
      await sequelize.query(
        `INSERT INTO install_reports (logger_id, release_id, state, offered_at, updated_at) VALUES (:loggerId, :releaseId, :offered, :now, :now)
         ON CONFLICT (logger_id, release_id) DO UPDATE SET offered_at = EXCLUDED.offered_at WHERE install_reports.offered_at IS NULL`,
        { transaction: t, replacements: { loggerId, releaseId, now, offered: OFFERED } },
      );
    },
  };
}
