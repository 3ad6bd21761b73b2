// Fleet views: the fleet table's filters, sort keys, flags and update states, the version
// matrix, lagging sites, notes, the logger timeline, sparklines and retries. Console API, camelCase.
import { z } from 'zod';
import semver from 'semver';
import { listOf, uuid } from './common';
import { CHANNELS, FLEET_FLAGS, LAGGING_REASONS, LOGGER_STATUSES, UPDATE_STATES, type Channel, type FleetFlag, type LaggingReason, type UpdateState } from './words';

export type { FleetFlag, LaggingReason, UpdateState };

// ─── Flags and update states ────────────────────────────────────────────────

/**
 * Flags, worst first (the phone card shows the worst): silent (no check-in for 3 intervals), unstable
 * (≥ 3 watchdog or brown-out resets in 24 h), low supply (below the model's update minimum), probe fault
 * (the probe's power-on value 85 °C, or a reading outside its −55…125 °C range).
 */

/** Watchdog and brown-out resets in 24 h at which a logger counts as unstable (the fleet flag). */
export const UNSTABLE_RESETS_24H = 3;
/** The temperature probe's power-on register value and valid range (probe datasheet; docs/SOURCES.md §9). */
export const PROBE_POWER_ON_C = 85;
export const PROBE_MIN_C = -55;
export const PROBE_MAX_C = 125;

/**
 * Where a logger stands with the current release of its channel (the highest release of its model and
 * channel that reached widening or complete and was not withdrawn):
 * up_to_date — runs it or newer; offered … failed — its install report for that release;
 * behind — behind with no report yet, or there is no current release, or no version reported.
 * (The list itself is UPDATE_STATES in schemas/words.ts.)
 */

// ─── The fleet table's columns ──────────────────────────────────────────────

/**
 * The fleet table's columns, each declared once, in the order the table shows them and the CSV export
 * writes them: the row fields it carries (GET /api/loggers) and whether the server sorts by it. The row
 * type, the sort allow-list (its ids are the `sort` parameter) and the column ids the console may hide
 * derive from this list. Each column's SQL, sort expression, CSV cell and presenter are in
 * server/fleet/columns.ts; its label, width and cell in components/fleet-table.tsx (null there: CSV only).
 */
export const fleetColumns = {
  serial: { sortable: true, fields: { serial: z.string() } },
  site: { sortable: true, fields: { siteId: uuid.nullable(), siteName: z.string().nullable() } },
  customer: { sortable: true, fields: { customer: z.string().nullable() } },
  model: { sortable: true, fields: { modelId: uuid, modelName: z.string() } },
  board: { sortable: true, fields: { board: z.string() } },
  channel: { sortable: true, fields: { channel: z.enum(CHANNELS) } },
  status: { sortable: false, fields: { status: z.enum(LOGGER_STATUSES) } },
  firmware: { sortable: true, fields: { firmware: z.string().nullable() } },
  /** Where the logger stands with the current release of its channel. */
  updateState: { sortable: true, fields: { updateState: z.enum(UPDATE_STATES) } },
  lastSeen: { sortable: true, fields: { lastSeenAt: z.iso.datetime().nullable() } },
  supplyV: { sortable: true, fields: { supplyV: z.number().nullable() } },
  /** Latest probe reading (°C), or null. */
  tempC: { sortable: false, fields: { tempC: z.number().nullable() } },
  /** Watchdog and brown-out resets in the last 24 h. */
  resets24h: { sortable: true, fields: { resets24h: z.number().int().nonnegative() } },
  /** Flags, worst first; worstFlag is the first of them or null. */
  flags: { sortable: false, fields: { flags: z.array(z.enum(FLEET_FLAGS)), worstFlag: z.enum(FLEET_FLAGS).nullable() } },
} as const satisfies Record<string, { sortable: boolean; fields: z.ZodRawShape }>;

export type FleetColumnId = keyof typeof fleetColumns;
export const fleetColumnIds = Object.keys(fleetColumns) as FleetColumnId[];

/** The columns the server sorts by: the allow-list of the `sort` parameter. */
export type FleetSortKey = { [K in FleetColumnId]: (typeof fleetColumns)[K]['sortable'] extends true ? K : never }[FleetColumnId];
export const fleetSortKeys = fleetColumnIds.filter((id): id is FleetSortKey => fleetColumns[id].sortable);

type UnionToIntersection<U> = (U extends unknown ? (u: U) => void : never) extends (i: infer I) => void ? I : never;
type ColumnFields = UnionToIntersection<(typeof fleetColumns)[FleetColumnId]['fields']>;

/** One row of the fleet table: the logger's id and every column's fields. */
export const fleetRow = z.strictObject({
  id: uuid,
  ...(Object.assign({}, ...fleetColumnIds.map((id) => fleetColumns[id].fields)) as ColumnFields),
});
export type FleetRow = z.infer<typeof fleetRow>;
/** The row fields a column carries. */
export type FleetColumnFields<K extends FleetColumnId> = Pick<FleetRow, keyof (typeof fleetColumns)[K]['fields'] & keyof FleetRow>;

const oneOf = (values: readonly string[]) => `must be one of ${values.join(', ')}`;

/** A version filter: an exact semantic version, or a range in the semver package's syntax (e.g. ">=2.1.0 <2.3.0", "2.x"). */
export const versionFilter = z
  .string()
  .trim()
  .min(1, 'is required')
  .max(100, 'at most 100 characters')
  .refine((v) => semver.valid(v) !== null || semver.validRange(v, { includePrerelease: true }) !== null, 'must be a semantic version or a semver range');

/**
 * A page of the fleet table (GET /api/loggers). `total` counts the matching loggers exactly when
 * totalIsEstimate is false; when true, more than a thousand match and `total` is the database's
 * estimate (the console shows "about …").
 */
export const fleetList = listOf(fleetRow).extend({ totalIsEstimate: z.boolean() });
export type FleetList = z.infer<typeof fleetList>;

/** The fleet table's filters, sort and paging (GET /api/loggers and its CSV export). */
export const fleetFilterFields = {
  q: z.string().trim().max(100, 'at most 100 characters').optional(),
  siteId: uuid.optional(),
  modelId: uuid.optional(),
  board: z.string().trim().min(1, 'is required').max(20, 'at most 20 characters').optional(),
  channel: z.enum(CHANNELS, { message: oneOf(CHANNELS) }).optional(),
  version: versionFilter.optional(),
  flag: z.enum(FLEET_FLAGS, { message: oneOf(FLEET_FLAGS) }).optional(),
  updateState: z.enum(UPDATE_STATES, { message: oneOf(UPDATE_STATES) }).optional(),
  sort: z.enum(fleetSortKeys, { message: oneOf(fleetSortKeys) }).default('serial'),
  dir: z.enum(['asc', 'desc'], { message: 'must be asc or desc' }).default('asc'),
  /** nextCursor of the previous answer: a page number in page mode, or a keyset cursor; "start" begins a keyset walk. */
  cursor: z.string().trim().max(1000, 'at most 1000 characters').optional(),
};

// ─── Version matrix ─────────────────────────────────────────────────────────

export type VersionMatrix = {
  models: {
    modelId: string;
    modelName: string;
    boards: string[];
    /** Loggers (not retired) per running version × board; versions newest first. */
    versions: { firmware: string | null; total: number; byBoard: Record<string, number> }[];
    channels: {
      channel: Channel;
      currentRelease: { id: string; version: string; state: string; share: number; since: string | null } | null;
      /** Enrolled loggers on the channel. */
      loggers: number;
      /** Of them, running the current release or newer. */
      onCurrent: number;
      /** onCurrent / loggers, 0–1 (0 when there are no loggers). */
      share: number;
    }[];
    releases: {
      id: string;
      version: string;
      channel: Channel;
      state: string;
      startedAt: string | null;
      /** Installs per UTC day since the release started, with the running total. */
      adoption: { day: string; installed: number; cumulative: number }[];
    }[];
  }[];
};

// ─── Why no update? ─────────────────────────────────────────────────────────

/** Why the offer decision (server/device-api/decision.ts) offers a release to a logger or not. */
export const REASON_CODES = [
  'offered',
  'stepping_stone',
  'retired',
  'not_enrolled',
  'firmware_unknown',
  'wrong_channel',
  'not_live',
  'manifest_expired',
  'board_not_supported',
  'not_newer',
  'security_counter_too_low',
  'failed_awaiting_retry',
  'not_pilot_site',
  'outside_share',
  'needs_stepping_stone',
  'superseded',
  'low_supply',
  'outside_daylight_window',
] as const;
export type ReasonCode = (typeof REASON_CODES)[number];

/** One release's verdict for the logger, with its reason in words. */
export type WhyVerdict = {
  releaseId: string;
  version: string;
  outcome: 'offered' | 'not_offered';
  reason: ReasonCode;
  /** One sentence with the figures behind the reason, for support. */
  detail: string;
  /** The release the logger's next check-in would be offered. */
  offer: boolean;
  label: string;
};
/** GET /api/loggers/:id/why: the decision the logger's next check-in would get now. */
export type WhyAnswer = { loggerId: string; at: string; offer: { releaseId: string; version: string } | null; verdicts: WhyVerdict[] };

// ─── Lagging sites ──────────────────────────────────────────────────────────


export const LAGGING_REASON_LABELS: Record<LaggingReason, string> = {
  silent: 'Not heard from: no check-in for 3 intervals',
  low_supply: 'Low supply: below the update minimum',
  board_not_supported: 'Board revision not targeted by the release',
  outside_daylight_window: 'Outside the daylight window',
  outside_share: 'Not yet in the rollout share',
  not_pilot_site: 'Not a pilot site',
  release_not_live: 'Release stopped or paused',
  failed_awaiting_retry: 'Install failed, awaiting retry',
  needs_stepping_stone: 'Needs a stepping-stone release first',
  security_counter_too_low: 'Security counter below the logger’s',
  manifest_expired: 'The release’s signed manifest has expired',
  offered: 'Offered, installing',
  other: 'Other',
};

export const laggingQuery = z.object({
  reason: z.enum(LAGGING_REASONS, { message: oneOf(LAGGING_REASONS) }).optional(),
  customer: z.string().trim().max(100, 'at most 100 characters').optional(),
  /** One site (the lagging site's own screen). */
  siteId: uuid.optional(),
  sort: z.enum(['lagging_since', 'behind'], { message: 'must be lagging_since or behind' }).default('lagging_since'),
  dir: z.enum(['asc', 'desc'], { message: 'must be asc or desc' }).optional(),
  page: z.coerce.number({ message: 'must be a number' }).int().min(1, 'pages count from 1').default(1),
  pageSize: z.coerce
    .number({ message: 'must be a number' })
    .refine((n) => [25, 50, 100].includes(n), 'must be 25, 50 or 100')
    .default(25),
});
export type LaggingQuery = z.infer<typeof laggingQuery>;

export type LaggingLogger = {
  id: string;
  serial: string;
  firmware: string | null;
  /** The current release of the logger's channel, which the logger lacks (the one "retry" acts on). */
  targetReleaseId: string;
  targetVersion: string;
  reason: LaggingReason;
  reasonLabel: string;
  detail: string;
};

/**
 * How fresh an answer read from a summary the worker keeps is (server/fleet/summaries.ts): when it was last
 * caught up, and how many seconds before the answer that was (null before its first run).
 */
export type SummaryFreshness = { asOf: string | null; ageS: number | null };

export type LaggingSite = {
  siteId: string;
  siteName: string;
  customer: string;
  /** The site's IANA time zone: its times are shown in it (lib/site-time.ts). */
  timeZone: string;
  /** Enrolled loggers below the current release of their channel. */
  behind: number;
  /** Enrolled loggers at the site. */
  total: number;
  oldestVersion: string | null;
  /** When the earliest release the site lacks reached widening or complete. */
  laggingSince: string;
  lastContactAt: string | null;
  reasons: Partial<Record<LaggingReason, number>>;
  loggers: LaggingLogger[];
  /** What the caller may do here (server/auth/policies.ts): retry its failed installs, add a note to the site. */
  can: { retry: boolean; addNote: boolean };
};

/** GET /api/fleet/lagging-sites: a page of lagging sites, with the lagging summary's freshness. */
export type LaggingList = { rows: LaggingSite[]; total: number; nextCursor?: string } & SummaryFreshness;

// ─── Retry, notes, timeline ─────────────────────────────────────────────────

export const retryRequest = z.union(
  [
    z.object({ loggerIds: z.array(uuid).min(1, 'needs at least one logger').max(1000, 'at most 1000 loggers') }).strict(),
    z.object({ siteId: uuid }).strict(),
  ],
  { message: 'send either loggerIds (a list) or siteId' },
);
export type RetryRequest = z.infer<typeof retryRequest>;
/** A retry as the console sends it: the release whose failed installs are cleared, and for whom. */
export type RetryOrder = { releaseId: string } & RetryRequest;
/** POST /api/releases/:id/retry: how many failed installs were cleared for another offer. */
export type RetryAnswer = { retried: number };

export const noteRequest = z.object({
  text: z.string({ message: 'is required' }).trim().min(1, 'is required').max(1000, 'at most 1000 characters'),
});

export type Note = { id: string; targetType: 'logger' | 'site'; targetId: string; text: string; authorName: string; createdAt: string };

/** A site's notes, newest first (GET /api/sites/:id/notes); cursor is the previous page's nextCursor. */
export const siteNotesQuery = z.object({
  cursor: z.string().trim().max(500, 'at most 500 characters').optional(),
  limit: z.coerce.number({ message: 'must be a number' }).int('must be a whole number').min(1, 'at least 1').max(100, 'at most 100').default(20),
});
export type SiteNotesQuery = z.infer<typeof siteNotesQuery>;

export const timelineQuery = z.object({
  cursor: z.string().trim().max(500, 'at most 500 characters').optional(),
  limit: z.coerce.number({ message: 'must be a number' }).int().min(1, 'at least 1').max(200, 'at most 200').default(50),
});

export type TimelineItem =
  | { kind: 'check_in'; at: string; firmware: string; supplyV: number | null; tempC: number | null; resets: Record<string, number> | null }
  | { kind: 'reset'; at: string; reason: string | null; counts: Record<string, number> }
  | { kind: 'install'; at: string; releaseId: string; version: string; state: string; reason: string | null; detail: string | null }
  | { kind: 'activity'; at: string; action: string; actorName: string; summary: string }
  | { kind: 'note'; at: string; id: string; authorName: string; text: string };

export const sparklineQuery = z.object({
  days: z.coerce.number({ message: 'must be a number' }).int().min(1, 'at least 1').max(30, 'at most 30').default(7),
});

export type Sparklines = { from: string; to: string; points: { hour: string; supplyV: number | null; tempC: number | null }[] };
