// Heliodor's domain words, each list declared once. Schemas, pure rules, SQL parameters
// (`= ANY(:liveStates)`) and the console's labels all derive from these; a label table is a
// `Record<Value, …>` per list, so adding a value makes the compiler name every place to handle it.

// ─── Releases ───────────────────────────────────────────────────────────────

/** Every state a release can be in (the lifecycle table in server/rollout/lifecycle.ts moves between them). */
export const RELEASE_STATES = ['draft', 'pilot', 'widening', 'complete', 'paused', 'stopped', 'withdrawn'] as const;
export type ReleaseState = (typeof RELEASE_STATES)[number];

/** States in which a release offers updates and serves its image. */
export const LIVE_STATES = ['pilot', 'widening', 'complete'] as const satisfies readonly ReleaseState[];
export type LiveState = (typeof LIVE_STATES)[number];

/** States a paused or stopped release returns to on resume (a stop of a paused release returns to paused). */
export const RESUME_STATES = [...LIVE_STATES, 'paused'] as const satisfies readonly ReleaseState[];
export type ResumeState = (typeof RESUME_STATES)[number];

/** States in which a release has reached part of the fleet and may become its channel's current release. */
export const REACHED_STATES = ['widening', 'complete'] as const satisfies readonly ReleaseState[];

/** What a person (or, for `stop`, the trip rule) can do to a release. */
export const RELEASE_ACTIONS = ['start_pilot', 'widen', 'complete', 'pause', 'resume', 'stop', 'withdraw'] as const;
export type ReleaseAction = (typeof RELEASE_ACTIONS)[number];

/** Each action as the release page's buttons name it; refusals speak in the same words. */
export const RELEASE_ACTION_WORDS = {
  start_pilot: 'Start pilot',
  widen: 'Widen',
  complete: 'Complete',
  pause: 'Pause',
  resume: 'Resume',
  stop: 'Stop',
  withdraw: 'Withdraw',
} as const satisfies Record<ReleaseAction, string>;

/** The activity code each action records: one code per event, whoever causes it. */
export const RELEASE_EVENTS = {
  start_pilot: 'release.pilot_started',
  widen: 'release.widened',
  complete: 'release.completed',
  pause: 'release.paused',
  resume: 'release.resumed',
  stop: 'release.stopped',
  withdraw: 'release.withdrawn',
} as const satisfies Record<ReleaseAction, `release.${string}`>;

/** Who stopped a stopped release: a person in the console, or the trip rule. */
export const STOPPED_BY = ['person', 'trip'] as const;
export type StoppedBy = (typeof STOPPED_BY)[number];

/** The trip rules: each one, when its trip point is passed, stops a live release by itself. */
export const TRIP_RULES = ['failure_ratio', 'reset_rate', 'measurement_drift'] as const;
export type TripRule = (typeof TRIP_RULES)[number];

/**
 * The measurement-drift trip points (server/rollout/drift.ts) with their defaults: the median shift of
 * daily energy against the clear-sky model (a fraction: 0.1 = 10 %), of the probe's temperature above
 * the site's expected air temperature (°C), and of the share of flagged probe readings (a fraction:
 * 0.02 = 2 percentage points). The release columns (trip_drift_energy, trip_drift_temp_c,
 * trip_drift_flagged, migration 0019), the targeting form and the API's fields all derive from these names.
 */
export const DRIFT_TRIP_POINTS = { tripDriftEnergy: 0.1, tripDriftTempC: 3, tripDriftFlagged: 0.02 } as const;
export type DriftTripPoint = keyof typeof DRIFT_TRIP_POINTS;
export const DRIFT_TRIP_POINT_NAMES = Object.keys(DRIFT_TRIP_POINTS) as DriftTripPoint[];

/** Release channels: loggers follow one, releases go out on one. */
export const CHANNELS = ['stable', 'early'] as const;
export type Channel = (typeof CHANNELS)[number];

// ─── Installs ───────────────────────────────────────────────────────────────

/** The states a logger reports for an install, in the order they move forward. */
export const REPORTED_INSTALL_STATES = ['downloading', 'downloaded', 'installing', 'installed', 'failed'] as const;
export type ReportedInstallState = (typeof REPORTED_INSTALL_STATES)[number];

/** An install's state as the server keeps it: offered (by the server), then what the logger reported. */
export const INSTALL_STATES = ['offered', ...REPORTED_INSTALL_STATES] as const;
export type InstallState = (typeof INSTALL_STATES)[number];

/** States of an install that is under way (offered and not finished). */
export const UNDER_WAY_INSTALL_STATES = ['offered', 'downloading', 'downloaded', 'installing'] as const satisfies readonly InstallState[];

/** Why an install failed, as the logger reports it. */
export const FAILURE_REASONS = ['integrity', 'signature', 'storage', 'connection', 'unsupported', 'low_supply', 'other'] as const;
export type FailureReason = (typeof FAILURE_REASONS)[number];

/** Failures that pass by themselves: the offer stands and they count on neither side of the failure ratio. */
export const TRANSIENT_FAILURE_REASONS = ['connection', 'low_supply'] as const satisfies readonly FailureReason[];

// ─── Loggers ────────────────────────────────────────────────────────────────

export const LOGGER_STATUSES = ['registered', 'enrolled', 'retired'] as const;
export type LoggerStatus = (typeof LOGGER_STATUSES)[number];

/** What support watches for on a logger. */
export const FLEET_FLAGS = ['silent', 'unstable', 'low_supply', 'probe_fault'] as const;
export type FleetFlag = (typeof FLEET_FLAGS)[number];

/**
 * The first-readings check of a newly enrolled logger (lib/commissioning.ts): what it compares, and where it
 * stands — waiting for its first readings, passed, or failed on at least one item.
 */
export const COMMISSIONING_ITEMS = ['bus_voltage', 'current', 'probe', 'power'] as const;
export type CommissioningItem = (typeof COMMISSIONING_ITEMS)[number];
export const COMMISSIONING_STATES = ['waiting', 'passed', 'failed'] as const;
export type CommissioningState = (typeof COMMISSIONING_STATES)[number];

/** Why a logger last booted, as it reports it. */
export const RESET_REASONS = ['power_on', 'watchdog', 'brownout', 'software', 'exception', 'external', 'unknown'] as const;
export type ResetReason = (typeof RESET_REASONS)[number];

/** The resets the unstable flag and the reset trip count: the board's watchdog and brown-out resets. */
export const COUNTED_RESET_REASONS = ['watchdog', 'brownout'] as const satisfies readonly ResetReason[];

/** Where a logger stands with the current release of its channel. */
export const UPDATE_STATES = ['up_to_date', 'offered', 'downloading', 'downloaded', 'installing', 'installed', 'failed', 'behind'] as const;
export type UpdateState = (typeof UPDATE_STATES)[number];

// ─── Lagging sites ──────────────────────────────────────────────────────────

/** Why a logger is behind its channel's current release (each from the offer decision's reason). */
export const LAGGING_REASONS = [
  'silent',
  'low_supply',
  'board_not_supported',
  'outside_daylight_window',
  'outside_share',
  'not_pilot_site',
  'release_not_live',
  'failed_awaiting_retry',
  'needs_stepping_stone',
  'security_counter_too_low',
  'manifest_expired',
  'offered',
  'other',
] as const;
export type LaggingReason = (typeof LAGGING_REASONS)[number];

// ─── Team and accounts ──────────────────────────────────────────────────────

/** What the activity log records about people and their access (one code per event). */
export const TEAM_ACTIVITY_ACTIONS = [
  'person.invited',
  'person.invitation_resent',
  'person.invitation_revoked',
  'person.joined',
  'person.role_changed',
  'person.disabled',
  'person.enabled',
  'person.renamed',
  'person.password_reset_requested',
  'person.password_reset',
  'person.password_changed',
  'person.second_factor_on',
  'person.second_factor_off',
  'person.recovery_code_used',
  'person.signed_out',
  'person.sessions_revoked',
] as const;
export type TeamActivityAction = (typeof TEAM_ACTIVITY_ACTIONS)[number];

// ─── Activity ───────────────────────────────────────────────────────────────

/** Every event the activity log records: one code per event, whoever caused it (details say who or what). */
export const ACTIVITY_ACTIONS = [
  'demo.seeded',
  'person.created',
  'person.signed_in',
  'key.registered',
  'key.retired',
  'key.revoked',
  'trust.signature_added',
  'trust.set_signed',
  'token.created',
  'token.revoked',
  'model.created',
  'model.updated',
  'model.signing_threshold_changed',
  'site.created',
  'site.updated',
  'site.note_added',
  'logger.registered',
  'logger.batch_registered',
  'logger.batch_labels_issued',
  'logger.enrolled',
  'logger.moved',
  'logger.retired',
  'logger.token_rotated',
  'logger.note_added',
  'logger.photo_added',
  'logger.commissioning_checked',
  'logger.commissioning_restarted',
  'profile.changed',
  'release.uploaded',
  'release.edited',
  'release.deleted',
  'release.retried',
  'release.signature_added',
  'release.resigned',
  ...Object.values(RELEASE_EVENTS),
  ...TEAM_ACTIVITY_ACTIONS,
] as const;
export type ActivityAction = (typeof ACTIVITY_ACTIONS)[number];
