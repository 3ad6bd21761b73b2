// SQL fragments the fleet views share: the current release of each model and channel, the flags, the
// update state. Every value reaches the database as a bound replacement (:name); the only text put
// into a statement comes from the constants in this file, chosen by allow-listed keys. Domain words
// (states, statuses) are replacements too: a statement using these fragments spreads SQL_WORDS.
import { PROBE_MAX_C, PROBE_MIN_C, PROBE_POWER_ON_C, UNSTABLE_RESETS_24H } from '../../schemas/fleet';

/**
 * The current release of each model and channel: the highest release by semantic-version precedence
 * that reached widening or complete (widened_at or completed_at set) and was not withdrawn. A stop
 * or pause afterwards keeps it current — loggers still waiting for it lag behind "release stopped or
 * paused" — while a release only ever in pilot is not current yet. `since` is when it first reached
 * widening or complete.
 */
export const CURRENT_RELEASES = `
  SELECT DISTINCT ON (r.model_id, r.channel) r.id, r.model_id, r.channel, r.version, r.state, r.share,
         heliodor_semver_key(r.version) COLLATE "C" AS version_key, LEAST(r.widened_at, r.completed_at) AS since
    FROM releases r
   WHERE (r.widened_at IS NOT NULL OR r.completed_at IS NOT NULL) AND r.state <> :withdrawn
   ORDER BY r.model_id, r.channel, heliodor_semver_key(r.version) COLLATE "C" DESC`;

/** Enrolled and not seen for three check-in intervals (the overview counts "silent" the same way). */
export const SILENT = `(l.status = :enrolled AND (l.last_seen_at IS NULL OR l.last_seen_at < CAST(:now AS timestamptz) - make_interval(secs => 3 * m.check_in_interval_s)))`;
export const RESETS_24H = `heliodor_resets_since(l.recent_resets, CAST(:now AS timestamptz) - interval '24 hours')`;
export const UNSTABLE = `(${RESETS_24H} >= ${UNSTABLE_RESETS_24H})`;
export const LOW_SUPPLY = `(l.status <> :retired AND l.supply_v IS NOT NULL AND l.supply_v < m.min_update_supply_v)`;
/** The probe reading as a number, or null when absent or not a number. */
const TEMP = `(CASE WHEN jsonb_typeof(l.readings->'temp_c') = 'number' THEN (l.readings->>'temp_c')::float8 END)`;
export const TEMP_C = TEMP;
export const PROBE_FAULT = `(l.status <> :retired AND ${TEMP} IS NOT NULL AND (${TEMP} = ${PROBE_POWER_ON_C} OR ${TEMP} < ${PROBE_MIN_C} OR ${TEMP} > ${PROBE_MAX_C}))`;

export const FLAG_SQL = { silent: SILENT, unstable: UNSTABLE, low_supply: LOW_SUPPLY, probe_fault: PROBE_FAULT } as const;

/**
 * The update state against the current release `cr` of the logger's model and channel, with its install
 * report `ir` (UPDATE_STATES in schemas/words.ts). A failed report an operator has since retried reads
 * as offered again.
 */
export const UPDATE_STATE = `(CASE
    WHEN cr.id IS NULL OR l.firmware IS NULL THEN :behind
    WHEN l.firmware_key >= cr.version_key THEN :upToDate
    WHEN ir.state IS NULL THEN :behind
    WHEN ir.state = :failed AND ir.retried_at IS NOT NULL AND ir.retried_at >= ir.updated_at THEN :offered
    ELSE ir.state END)`;

/** Pipeline order for sorting by update state: nothing yet, then the funnel, then done. */
export const UPDATE_STATE_RANK = `(CASE ${UPDATE_STATE}
    WHEN :behind THEN 0 WHEN :failed THEN 1 WHEN :offered THEN 2 WHEN :downloading THEN 3 WHEN :downloaded THEN 4
    WHEN :installing THEN 5 WHEN :installed THEN 6 ELSE 7 END)`;

/** The joins the fleet table reads from: model, site, the current release of the logger's channel, its report. */
export const FLEET_FROM = `
  FROM loggers l
  JOIN models m ON m.id = l.model_id
  LEFT JOIN sites s ON s.id = l.site_id
  LEFT JOIN current_releases cr ON cr.model_id = l.model_id AND cr.channel = l.channel
  LEFT JOIN install_reports ir ON ir.logger_id = l.id AND ir.release_id = cr.id`;
