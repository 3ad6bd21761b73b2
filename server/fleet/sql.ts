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
 * widening or complete. `expires_at` is its signed manifest's expiry (null: none).
 */
export const CURRENT_RELEASES = `
  SELECT DISTINCT ON (r.model_id, r.channel) r.id, r.model_id, r.channel, r.version, r.state, r.share, r.expires_at,
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
 * The fleet table's keys kept on the logger row (migration 0013, by triggers on every write that changes
 * them): site_sort, customer_sort, model_sort, search_text, update_state and update_rank (the state
 * against the current release of the logger's model and channel, and its pipeline order), resets_24h
 * and resets_oldest (from recent_resets). The table pages over them with index ranges on loggers alone
 * and joins the model and the site only for the rows of the page.
 */
export const FLEET_PAGE_JOINS = `
  JOIN models m ON m.id = l.model_id
  LEFT JOIN sites s ON s.id = l.site_id`;

/**
 * Resets in 24 h is a sliding window: a reset leaves recent_resets once it is 24 h old. This trims the
 * arrays whose oldest reset has left the window at :now (an index range on resets_oldest, a handful of
 * rows), so resets_24h (the array's length) is the count at :now for every logger. Rows another
 * transaction holds (a check-in writing them) are skipped, not waited for, and trimmed by the next read.
 */
export const TRIM_RESETS = `
  UPDATE loggers l
     SET recent_resets = ARRAY(SELECT r.at FROM unnest(l.recent_resets) AS r(at) WHERE r.at > CAST(:now AS timestamptz) - interval '24 hours' ORDER BY r.at)
   WHERE l.id IN (SELECT x.id FROM loggers x WHERE x.resets_oldest <= CAST(:now AS timestamptz) - interval '24 hours' FOR UPDATE SKIP LOCKED)`;
