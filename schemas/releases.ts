// Releases: upload fields, targeting edits while draft, lifecycle transitions, list filters.
import { z } from 'zod';
import semver from 'semver';
import { uuid } from './common';
import { boardLabel } from './manifest';
import { signatureRequest, type KeyState } from './keys';

import {
  CHANNELS,
  DRIFT_TRIP_POINT_NAMES,
  type DriftTripPoint,
  FAILURE_REASONS,
  INSTALL_STATES,
  LIVE_STATES,
  RELEASE_ACTIONS,
  RELEASE_STATES,
  type Channel,
  type FailureReason,
  type InstallState,
  type LiveState,
  type ReleaseAction,
  type ReleaseState,
  type ResumeState,
  type StoppedBy,
} from './words';

// The lifecycle's words are declared in schemas/words.ts; the table itself is the rollout core's.
export { LIVE_STATES, RELEASE_ACTIONS, RELEASE_STATES };
export type { Channel, FailureReason, InstallState, LiveState, ReleaseAction, ReleaseState, ResumeState, StoppedBy };

export const channelSchema = z.enum(CHANNELS, { error: `must be ${CHANNELS.join(' or ')}` });

/**
 * What a person or token may do with a release (its answers' `can`, from server/auth/policies.ts): the
 * lifecycle actions, edit (targeting, while draft), delete (a draft) and retry (failed installs).
 */
export const RELEASE_VERBS = [...RELEASE_ACTIONS, 'edit', 'delete', 'retry'] as const;
export type ReleaseVerb = (typeof RELEASE_VERBS)[number];
export type ReleaseCan = Record<ReleaseVerb, boolean>;

export const notesSchema = z.string({ error: 'must be text' }).max(20_000, 'at most 20 000 characters');

/** The text fields of the multipart upload besides image, manifest and signature. */
export const uploadFields = z.strictObject({
  notes: notesSchema.optional(),
  channel: channelSchema.optional(),
});

/** An upgrade-from range in the `semver` package's range syntax; blank means "from any version". */
export const upgradeFromSchema = z
  .string({ error: 'must be a semver range such as ">=2.0.0 <2.4.0", or null' })
  .trim()
  .max(200, 'at most 200 characters')
  .refine((range) => range === '' || semver.validRange(range) !== null, {
    message: 'is not a semver range (for example ">=2.0.0 <2.4.0" or "^2.3.0")',
  })
  .transform((range) => (range === '' ? null : range))
  .nullable();

/**
 * The measurement-drift trip points as the API takes them (names and defaults: schemas/words.ts
 * DRIFT_TRIP_POINTS): energy and flagged share as fractions, temperature in °C.
 */
const driftTripPointRules: Record<DriftTripPoint, z.ZodNumber> = {
  tripDriftEnergy: z.number({ error: 'must be a fraction from 0 to 1' }).min(0.01, 'must be 0.01 or more').max(1, 'must be at most 1 (a fraction, not a percentage)'),
  tripDriftTempC: z.number({ error: 'must be a number of °C' }).min(0.5, 'must be 0.5 °C or more').max(50, 'must be at most 50 °C'),
  tripDriftFlagged: z.number({ error: 'must be a fraction from 0 to 1' }).min(0.001, 'must be 0.001 or more').max(1, 'must be at most 1 (a fraction, not a percentage)'),
};
export const driftTripPointFields = Object.fromEntries(DRIFT_TRIP_POINT_NAMES.map((n) => [n, driftTripPointRules[n].optional()])) as {
  [K in DriftTripPoint]: z.ZodOptional<z.ZodNumber>;
};

export const patchReleaseRequest = z.strictObject({
  boards: z
    .array(boardLabel, { error: 'must be a list of board revision labels' })
    .min(1, 'choose at least one board revision')
    .refine((b) => new Set(b).size === b.length, 'must not name a board revision twice')
    .optional(),
  upgradeFrom: upgradeFromSchema.optional(),
  pilotSiteIds: z
    .array(uuid, { error: 'must be a list of site ids' })
    .max(500, 'at most 500 pilot sites')
    .refine((ids) => new Set(ids).size === ids.length, 'must not name a site twice')
    .optional(),
  daylightWindow: z.boolean({ error: 'must be true or false' }).optional(),
  tripFailureRatio: z.number({ error: 'must be a fraction from 0 to 1' }).min(0, 'must be 0 or more').max(1, 'must be at most 1 (a fraction, not a percentage)').optional(),
  tripMinReports: z.number({ error: 'must be a whole number' }).int('must be a whole number').min(1, 'must be at least 1').max(1_000_000, 'is too large').optional(),
  tripResetFactor: z.number({ error: 'must be a number' }).min(1, 'must be 1 or more').max(100, 'must be at most 100').optional(),
  ...driftTripPointFields,
  notes: notesSchema.optional(),
  channel: channelSchema.optional(),
});
export type PatchReleaseRequest = z.infer<typeof patchReleaseRequest>;

export const transitionRequest = z.strictObject({
  action: z.enum(RELEASE_ACTIONS, { error: `must be one of ${RELEASE_ACTIONS.join(', ')}` }),
  share: z.number({ error: 'must be a percentage' }).min(0, 'must be 0 or more').max(100, 'must be at most 100').optional(),
  reason: z.string({ error: 'must be text' }).trim().max(1000, 'at most 1000 characters').optional(),
});
export type TransitionRequest = z.infer<typeof transitionRequest>;

/** POST /api/releases/:id/signatures: one more signature over the draft's manifest bytes. */
export const addSignatureRequest = signatureRequest;
export type AddSignatureRequest = z.infer<typeof addSignatureRequest>;

/** PUT /api/releases/:id/manifest: a new manifest over the same image and version (a later expiry), with its signatures. */
export const resignRequest = z.strictObject({
  manifest: z.string({ error: 'must be the canonical manifest text' }).min(1, 'is required').max(64 * 1024, 'at most 64 KiB'),
  signatures: z.array(signatureRequest, { error: 'must be a list of signatures' }).min(1, 'at least one signature').max(16, 'at most 16 signatures'),
});
export type ResignRequest = z.infer<typeof resignRequest>;

export const releaseListQuery = z.object({
  modelId: uuid.optional(),
  state: z.enum(RELEASE_STATES, { error: `must be one of ${RELEASE_STATES.join(', ')}` }).optional(),
  channel: channelSchema.optional(),
});

export const estimateQuery = z.object({
  share: z.coerce.number({ error: 'must be a percentage' }).min(0, 'must be 0 or more').max(100, 'must be at most 100'),
});


// ─── Release answers (GET /api/releases, /api/releases/:id, /estimate) ─────

/** What names a release and where its rollout stands, in the list and on its page alike. */
type ReleaseHeading = {
  id: string;
  modelId: string;
  modelName: string;
  version: string;
  channel: Channel;
  state: ReleaseState;
  share: number;
};

/** One row of GET /api/releases. */
export type ReleaseRow = ReleaseHeading & {
  installed: number;
  failed: number;
  createdAt: string;
  /** Signed with a key that has since been revoked. */
  flagged: boolean;
};

/** Install reports by their current state; failures by reason (a missing or unknown reason counts as other). */
export type ReleaseCounts = Record<InstallState, number> & { failedByReason: Record<FailureReason, number> };

/** One step of a release's history: a lifecycle action, or "upload" for the row that created the draft. */
export type ReleaseTransitionView = {
  at: string;
  action: ReleaseAction | 'upload';
  fromState: ReleaseState | null;
  toState: ReleaseState;
  share: number | null;
  reason: string | null;
  /** Who took the step: a person, an automation token, or the system (the trip rule). */
  actorType: 'person' | 'token' | 'logger' | 'system';
  actorName: string;
};

/** The figures a trip rule judged when it stopped a release (kept on the release as trip_figures). */
export type TripFigures =
  | { rule: 'failure_ratio'; installed: number; failed: number; finished: number; ratio: number; tripPoint: number; minReports: number }
  | {
      rule: 'reset_rate';
      loggers: number;
      resetsAfter: number;
      loggerDaysAfter: number;
      resetsBefore: number;
      loggerDaysBefore: number;
      /** Resets per logger-day on the release, and before it as judged (with the floor). */
      after: number;
      before: number;
      /** after ÷ before, against the trip point (tripResetFactor). */
      factor: number;
      tripPoint: number;
    }
  | {
      rule: 'measurement_drift';
      /** The figures beyond their trip points. */
      tripped: ('energy' | 'temperature' | 'flagged')[];
      /** Median shifts after the install against before it, corrected by the loggers that did not install it. */
      energyShift: number | null;
      energyLoggers: number;
      tempShiftC: number | null;
      tempLoggers: number;
      flaggedShift: number | null;
      flaggedLoggers: number;
      controls: number;
      tripPoints: Record<DriftTripPoint, number>;
    };

type SignerView = { keyId: string; name: string; state: KeyState };

/** A release's signatures against its model's signing rule (k of n registered keys). */
export type ReleaseSigningView = {
  /** How many distinct registered, unrevoked keys must sign (the model's rule). */
  threshold: number;
  met: boolean;
  /** Keys whose signature verifies and counts, first signer first. */
  signedBy: SignerView[];
  /** Signers revoked since they signed: shown, not counted. */
  revokedSigners: SignerView[];
  /** Registered, unrevoked keys that have not signed. */
  missing: SignerView[];
};

/** A release as GET /api/releases/:id, PATCH, transitions and the upload answer it. */
export type ReleaseView = ReleaseHeading & Record<DriftTripPoint, number> & {
  resumeState: ResumeState | null;
  /** Who stopped it while it is stopped (kept once withdrawn): a person, or the trip rule ("Tripped"). */
  stoppedBy: StoppedBy | null;
  /** For a trip, the rule and the figures that tripped it. */
  tripFigures: TripFigures | null;
  boards: string[];
  manifestBoards: string[];
  upgradeFrom: string | null;
  pilotSiteIds: string[];
  pilotSites: { id: string; name: string }[];
  daylightWindow: boolean;
  tripFailureRatio: number;
  tripMinReports: number;
  tripResetFactor: number;
  securityCounter: number;
  notes: string;
  /** The notes rendered to safe HTML (empty when there are none). */
  notesHtml: string;
  image: { sha256: string; size: number };
  key: { id: string; keyId: string; name: string; state: KeyState } | null;
  flagged: boolean;
  signing: ReleaseSigningView;
  /** The manifest's `expires`: nothing is offered after it (null when it has none). */
  expiresAt: string | null;
  counts: ReleaseCounts;
  history: ReleaseTransitionView[];
  allowedActions: ReleaseAction[];
  createdAt: string;
  createdBy: { name: string };
  /** What the caller may do with it now: the lifecycle and their role together. */
  can: ReleaseCan;
};

/** GET /api/releases/:id/estimate: how many more loggers a share would make eligible. */
export type ReleaseEstimate = { share: number; eligibleNow: number; eligibleAtShare: number; more: number };

// ─── Release dashboard ──────────────────────────────────────────────────────

export const releaseSitesQuery = z.object({
  page: z.coerce.number({ message: 'must be a number' }).int('must be a whole number').min(1, 'at least 1').max(100_000, 'at most 100 000').default(1),
  pageSize: z.coerce.number({ message: 'must be a number' }).int('must be a whole number').min(1, 'at least 1').max(100, 'at most 100').default(10),
});
export type ReleaseSitesQuery = z.infer<typeof releaseSitesQuery>;

/** Install reports of one release within a group of loggers (a board revision or a site). */
export type InstallTally = {
  /** Enrolled loggers of the release's model and channel in the group. */
  loggers: number;
  /** Of those, running this release or newer. */
  onRelease: number;
  /** Loggers with an install report: offered at least once. */
  reached: number;
  /** Reports between offered and installing. */
  inProgress: number;
  installed: number;
  failed: number;
  /** Median seconds from the first offer to the confirmed install; null before any install. */
  medianInstallS: number | null;
};

export type ReleaseBoardRow = InstallTally & { board: string; targeted: boolean };
export type ReleaseSiteRow = InstallTally & { siteId: string; siteName: string; customer: string };

/** One measurement-drift figure on the dashboard: the median shift of `loggers`, against its trip point. */
export type DriftGaugeFigure = { loggers: number; shift: number | null; threshold: number; judged: boolean; over: boolean };

export type ReleaseDashboard = {
  releaseId: string;
  generatedAt: string;
  timeToInstall: { installs: number; medianS: number | null; p90S: number | null };
  trip: {
    failureRatio: { installed: number; failed: number; finished: number; ratio: number; threshold: number; minReports: number; judged: boolean; over: boolean };
    resetRate: {
      loggers: number;
      resetsAfter: number;
      loggerDaysAfter: number;
      resetsBefore: number;
      loggerDaysBefore: number;
      minLoggers: number;
      minLoggerDaysBefore: number;
      minHours: number;
      after: number;
      before: number;
      beforeJudged: number;
      factor: number;
      threshold: number;
      judged: boolean;
      over: boolean;
    };
    drift: {
      minLoggers: number;
      windowDays: number;
      controls: number;
      energy: DriftGaugeFigure;
      temperature: DriftGaugeFigure;
      flagged: DriftGaugeFigure;
      over: boolean;
    };
  };
  byBoard: ReleaseBoardRow[];
  /** Sites the release reached, failures first (the first page; the rest from GET /api/releases/:id/sites). */
  bySite: { rows: ReleaseSiteRow[]; total: number };
  adoption: { day: string; installed: number; cumulative: number }[];
};
