// The fleet summaries (tables and triggers: migration 0014_summaries): counts the writes keep in their
// own transaction, and the lagging loggers the summary worker keeps.
//
// Counts. Every write to loggers and install_reports appends its change to logger_count_changes /
// report_count_changes (triggers, no lock on any shared row). `foldCounts` moves the changes into the
// per-site and fleet-wide tables in one transaction; a reader sums a table and the changes not yet
// folded in one statement, so its count is exact at its snapshot, folded or not. Unscoped callers read
// the fleet-wide table (a few hundred rows); an integrator the per-site rows of their sites and
// registrations (server/auth/policies.ts loggerScope, siteScope), so their answer sums only what they
// may read.
//
// Lagging loggers. The reason a logger lags comes from the offer decision (JavaScript), so triggers only
// queue what changed: a logger's facts or reports (summary_dirty_loggers), a model's releases, pilot
// sites or guards (summary_dirty_models). `catchUp` recomputes the queued loggers, and those whose reason
// can change with the clock alone (recheck_at: the silence threshold, the daylight window's edges, the
// expiry of the release's signed manifest), and
// rolls them up per site (lagging_sites). It runs under a PostgreSQL advisory lock, one batch per
// transaction, so with several processes one works and the others read; a request that finds the lock
// free runs a small catch-up itself before it reads, so a quiet console is never behind. Answers carry
// `asOf`: the clock when the queue last ran dry.
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Logger as Pino } from 'pino';
import type { SqlScope } from '../auth/policies';
import { daylightWindowAt } from '../rollout/daylight';
import { SQL_WORDS } from '../db/sql-words';
import type { SummaryFreshness } from '../../schemas/fleet';
import { CURRENT_RELEASES, SILENT } from './sql';
import { DECISION_COLUMNS, decisionsFor, type LoggerForDecision } from './verdicts';
import { reasonOf, type BehindFacts } from './reasons';

/** Advisory lock keys (pg_try_advisory_xact_lock): one for folding counts, one for the lagging loggers. */
const FOLD_LOCK = 0x4865_6c01;
const LAGGING_LOCK = 0x4865_6c02;

/** Loggers recomputed per transaction: a batch holds the lagging lock for a few tens of milliseconds. */
const BATCH = 1000;
/** A request catches up itself only when this few loggers are queued; the worker does the rest. */
const REQUEST_BUDGET = 500;
/** A sited logger's reason is rechecked at least this often (the daylight window moves day by day). */
const DAYLIGHT_RECHECK_MS = 60 * 60 * 1000;

/** The summary tables (migration 0014_summaries): derived from loggers, install reports and releases. */
export const SUMMARY_TABLES = [
  'logger_count_changes',
  'site_logger_counts',
  'fleet_logger_counts',
  'report_count_changes',
  'site_report_counts',
  'release_report_counts',
  'lagging_loggers',
  'lagging_sites',
  'summary_dirty_loggers',
  'summary_dirty_models',
  'summary_state',
] as const;

export type SummaryDeps = { sequelize: Sequelize; now: () => Date; logger?: Pino };

// ─── Counts ─────────────────────────────────────────────────────────────────

const LOGGER_KEY = 'site_id, registered_by, model_id, channel, board, status, firmware';
const LOGGER_FLEET_KEY = 'model_id, channel, board, status, firmware';
const REPORT_KEY = 'release_id, site_id, registered_by, board, channel, status, state, day';
const REPORT_FLEET_KEY = 'release_id, board, channel, status, state, day';

/** Folds the appended count changes into the per-site and fleet-wide tables; false when another process is at it. */
export async function foldCounts(sequelize: Sequelize): Promise<boolean> {
  return sequelize.transaction(async (transaction) => {
    const [{ locked }] = await sequelize.query<{ locked: boolean }>('SELECT pg_try_advisory_xact_lock(:key) AS locked', {
      type: QueryTypes.SELECT,
      replacements: { key: FOLD_LOCK },
      transaction,
    });
    if (!locked) return false;
    await sequelize.query(
      `WITH moved AS (DELETE FROM logger_count_changes RETURNING *),
       per_site AS (
         INSERT INTO site_logger_counts AS t (${LOGGER_KEY}, firmware_key, n)
         SELECT ${LOGGER_KEY}, firmware_key, sum(n) FROM moved GROUP BY ${LOGGER_KEY}, firmware_key
         ON CONFLICT (${LOGGER_KEY}) DO UPDATE SET n = t.n + EXCLUDED.n
       )
       INSERT INTO fleet_logger_counts AS t (${LOGGER_FLEET_KEY}, firmware_key, n)
       SELECT ${LOGGER_FLEET_KEY}, firmware_key, sum(n) FROM moved GROUP BY ${LOGGER_FLEET_KEY}, firmware_key
       ON CONFLICT (${LOGGER_FLEET_KEY}) DO UPDATE SET n = t.n + EXCLUDED.n`,
      { transaction },
    );
    await sequelize.query(
      `WITH moved AS (DELETE FROM report_count_changes RETURNING *),
       per_site AS (
         INSERT INTO site_report_counts AS t (${REPORT_KEY}, n)
         SELECT ${REPORT_KEY}, sum(n) FROM moved GROUP BY ${REPORT_KEY}
         ON CONFLICT (${REPORT_KEY}) DO UPDATE SET n = t.n + EXCLUDED.n
       )
       INSERT INTO release_report_counts AS t (${REPORT_FLEET_KEY}, n)
       SELECT ${REPORT_FLEET_KEY}, sum(n) FROM moved GROUP BY ${REPORT_FLEET_KEY}
       ON CONFLICT (${REPORT_FLEET_KEY}) DO UPDATE SET n = t.n + EXCLUDED.n`,
      { transaction },
    );
    await sequelize.query(
      `DELETE FROM site_logger_counts WHERE n = 0; DELETE FROM fleet_logger_counts WHERE n = 0;
       DELETE FROM site_report_counts WHERE n = 0; DELETE FROM release_report_counts WHERE n = 0;`,
      { transaction },
    );
    return true;
  });
}

/**
 * Logger counts the scope admits, as a subquery with the columns site_id (null fleet-wide), registered_by,
 * model_id, channel, board, status, firmware, firmware_key, n. `scope` is loggerScope(actor, 'c') or
 * siteScope(actor, 'c.site_id'). `perSite` keeps the site even for a caller who may read every logger.
 */
export function loggerCounts(scope: SqlScope, perSite = false): string {
  if (scope.sql === 'TRUE' && !perSite) {
    return `(SELECT NULL::uuid AS site_id, NULL::uuid AS registered_by, ${LOGGER_FLEET_KEY}, firmware_key, n FROM fleet_logger_counts
             UNION ALL SELECT NULL::uuid, NULL::uuid, ${LOGGER_FLEET_KEY}, firmware_key, n FROM logger_count_changes)`;
  }
  return `(SELECT c.* FROM (SELECT ${LOGGER_KEY}, firmware_key, n FROM site_logger_counts
                            UNION ALL SELECT ${LOGGER_KEY}, firmware_key, n FROM logger_count_changes) c WHERE ${scope.sql})`;
}

/** Install report counts the scope admits, as a subquery with the columns of REPORT_KEY and n (like loggerCounts). */
export function reportCounts(scope: SqlScope, perSite = false): string {
  if (scope.sql === 'TRUE' && !perSite) {
    return `(SELECT release_id, NULL::uuid AS site_id, NULL::uuid AS registered_by, board, channel, status, state, day, n FROM release_report_counts
             UNION ALL SELECT release_id, NULL::uuid, NULL::uuid, board, channel, status, state, day, n FROM report_count_changes)`;
  }
  return `(SELECT c.* FROM (SELECT ${REPORT_KEY}, n FROM site_report_counts UNION ALL SELECT ${REPORT_KEY}, n FROM report_count_changes) c WHERE ${scope.sql})`;
}

// ─── Lagging loggers ────────────────────────────────────────────────────────

type BehindRow = LoggerForDecision &
  BehindFacts & { firmwareKey: string[]; since: Date; lastSeenAt: Date | null; checkInIntervalS: number; currentExpiresAt?: Date | null };

/**
 * When the reason of a logger behind may change with the clock alone: it falls silent, the daylight window
 * opens or closes, or the signed manifest of the release it lacks expires (reason manifest_expired).
 */
export function recheckAt(row: BehindRow, now: Date): Date | null {
  if (row.silent) return null; // only a check-in (a write, queued by the trigger) ends a silence
  const times: number[] = [];
  if (row.currentExpiresAt) times.push(new Date(row.currentExpiresAt).getTime());
  if (row.lastSeenAt) times.push(new Date(row.lastSeenAt).getTime() + 3 * row.checkInIntervalS * 1000);
  if (row.latitude !== null && row.longitude !== null) {
    times.push(now.getTime() + DAYLIGHT_RECHECK_MS);
    const window = daylightWindowAt(now, Number(row.latitude), Number(row.longitude));
    if (window.kind === 'window') times.push(...[window.opens.getTime(), window.closes.getTime() + 1].filter((t) => t > now.getTime()));
  }
  const next = times.filter((t) => t > now.getTime());
  return next.length === 0 ? null : new Date(Math.min(...next));
}

/** Every enrolled logger among `ids` that is behind the current release of its channel, with the facts its reason needs. */
async function behindAmong(sequelize: Sequelize, ids: string[], now: Date, transaction: unknown): Promise<BehindRow[]> {
  return sequelize.query<BehindRow>(
    `WITH current_releases AS (${CURRENT_RELEASES}),
     picked AS MATERIALIZED (SELECT * FROM loggers WHERE id IN (:ids))
     SELECT ${DECISION_COLUMNS}, ${SILENT} AS silent, cr.id AS "currentId", cr.version AS "currentVersion", cr.since,
            cr.expires_at AS "currentExpiresAt", l.firmware_key AS "firmwareKey", l.last_seen_at AS "lastSeenAt", m.check_in_interval_s AS "checkInIntervalS"
       FROM picked l
       JOIN models m ON m.id = l.model_id
       JOIN sites s ON s.id = l.site_id
       JOIN current_releases cr ON cr.model_id = l.model_id AND cr.channel = l.channel
      WHERE l.status = :enrolled AND l.firmware IS NOT NULL AND l.firmware_key <> '{}' AND l.firmware_key < cr.version_key`,
    { type: QueryTypes.SELECT, replacements: { ...SQL_WORDS, ids, now: now.toISOString() }, transaction: transaction as never },
  );
}

/** Recomputes the lagging rows of `ids` and the roll-up of their sites (old and new), inside `transaction`. */
async function recompute(sequelize: Sequelize, ids: string[], now: Date, transaction: unknown): Promise<void> {
  const t = transaction as never;
  const removed = await sequelize.query<{ site_id: string }>('DELETE FROM lagging_loggers WHERE logger_id IN (:ids) RETURNING site_id', {
    type: QueryTypes.SELECT,
    replacements: { ids },
    transaction: t,
  });
  const rows = await behindAmong(sequelize, ids, now, transaction);
  const decisions = await decisionsFor(sequelize, rows, now);
  const records = rows.map((r) => {
    const { reason, detail } = reasonOf(r, decisions.get(r.id));
    return {
      logger_id: r.id,
      site_id: r.siteId,
      model_id: r.modelId,
      firmware: r.firmware,
      firmware_key: r.firmwareKey,
      target_release_id: r.currentId,
      target_version: r.currentVersion,
      since: new Date(r.since).toISOString(),
      reason,
      detail,
      recheck_at: recheckAt(r, now)?.toISOString() ?? null,
    };
  });
  if (records.length > 0) {
    await sequelize.query(
      `INSERT INTO lagging_loggers (logger_id, site_id, model_id, firmware, firmware_key, target_release_id, target_version, since, reason, detail, recheck_at)
       SELECT logger_id, site_id, model_id, firmware, firmware_key, target_release_id, target_version, since, reason, detail, recheck_at
         FROM jsonb_to_recordset(CAST(:records AS jsonb)) AS x(logger_id uuid, site_id uuid, model_id uuid, firmware text, firmware_key text[],
              target_release_id uuid, target_version text, since timestamptz, reason text, detail text, recheck_at timestamptz)`,
      { replacements: { records: JSON.stringify(records) }, transaction: t },
    );
  }
  const sites = [...new Set([...removed.map((r) => r.site_id), ...rows.map((r) => r.siteId!)])];
  if (sites.length === 0) return;
  await sequelize.query(
    `DELETE FROM lagging_sites WHERE site_id IN (:sites);
     INSERT INTO lagging_sites (site_id, site_name, behind, oldest_version, lagging_since, reasons)
     SELECT g.site_id, s.name, g.behind, g.oldest_version, g.lagging_since, r.reasons
       FROM (SELECT site_id, count(*)::int AS behind, (array_agg(firmware ORDER BY firmware_key))[1] AS oldest_version, min(since) AS lagging_since
               FROM lagging_loggers WHERE site_id IN (:sites) GROUP BY site_id) g
       JOIN (SELECT site_id, jsonb_object_agg(reason, n) AS reasons
               FROM (SELECT site_id, reason, count(*)::int AS n FROM lagging_loggers WHERE site_id IN (:sites) GROUP BY site_id, reason) x
              GROUP BY site_id) r ON r.site_id = g.site_id
       JOIN sites s ON s.id = g.site_id`,
    { replacements: { sites }, transaction: t },
  );
}

async function tryLock(sequelize: Sequelize, key: number, transaction: unknown): Promise<boolean> {
  const [{ locked }] = await sequelize.query<{ locked: boolean }>('SELECT pg_try_advisory_xact_lock(:key) AS locked', {
    type: QueryTypes.SELECT,
    replacements: { key },
    transaction: transaction as never,
  });
  return locked;
}

export type CatchUp = { done: boolean; busy: boolean; recomputed: number };

/**
 * Recomputes what the queue holds now (and the loggers due a recheck), at most `budget` loggers; when the
 * queue as it stood at the start ran dry, stamps summary_state.as_of with `now`. `busy` when another
 * process holds the lock.
 */
export async function catchUp(deps: SummaryDeps, budget = Infinity): Promise<CatchUp> {
  const { sequelize } = deps;
  const now = deps.now();
  const start = await sequelize.transaction(async (transaction) => {
    if (!(await tryLock(sequelize, LAGGING_LOCK, transaction))) return null;
    const models = await sequelize.query<{ model_id: string }>('DELETE FROM summary_dirty_models RETURNING model_id', { type: QueryTypes.SELECT, transaction });
    const modelIds = [...new Set(models.map((m) => m.model_id))];
    if (modelIds.length > 0) {
      await sequelize.query(
        `INSERT INTO summary_dirty_loggers (logger_id)
         SELECT id FROM loggers WHERE model_id IN (:modelIds) UNION SELECT logger_id FROM lagging_loggers WHERE model_id IN (:modelIds)`,
        { replacements: { modelIds }, transaction },
      );
    }
    await sequelize.query('INSERT INTO summary_dirty_loggers (logger_id) SELECT logger_id FROM lagging_loggers WHERE recheck_at <= :now', {
      replacements: { now: now.toISOString() },
      transaction,
    });
    const [{ last, queued }] = await sequelize.query<{ last: string | null; queued: number }>(
      'SELECT max(id)::text AS last, count(*)::int AS queued FROM summary_dirty_loggers',
      { type: QueryTypes.SELECT, transaction },
    );
    return { last, queued };
  });
  if (start === null) return { done: false, busy: true, recomputed: 0 };
  if (start.queued > budget) return { done: false, busy: false, recomputed: 0 };
  let recomputed = 0;
  if (start.last !== null) {
    for (;;) {
      const outcome = await sequelize.transaction(async (transaction) => {
        if (!(await tryLock(sequelize, LAGGING_LOCK, transaction))) return 'busy' as const;
        const taken = await sequelize.query<{ logger_id: string }>(
          `DELETE FROM summary_dirty_loggers WHERE id IN (SELECT id FROM summary_dirty_loggers WHERE id <= :last ORDER BY id LIMIT :batch)
           RETURNING logger_id`,
          { type: QueryTypes.SELECT, replacements: { last: start.last, batch: BATCH }, transaction },
        );
        if (taken.length === 0) return 'dry' as const;
        const ids = [...new Set(taken.map((r) => r.logger_id))];
        await recompute(sequelize, ids, now, transaction);
        recomputed += ids.length;
        return 'more' as const;
      });
      if (outcome === 'busy') return { done: false, busy: true, recomputed };
      if (outcome === 'dry') break;
    }
  }
  await sequelize.query('UPDATE summary_state SET as_of = :now WHERE name = :name', {
    replacements: { now: now.toISOString(), name: 'lagging' },
  });
  return { done: true, busy: false, recomputed };
}

/** When the lagging loggers were last caught up (null before the first run). */
export async function laggingAsOf(sequelize: Sequelize): Promise<Date | null> {
  const [row] = await sequelize.query<{ as_of: Date | null }>('SELECT as_of FROM summary_state WHERE name = :name', {
    type: QueryTypes.SELECT,
    replacements: { name: 'lagging' },
  });
  return row?.as_of ? new Date(row.as_of) : null;
}

/** What a summary answer says about its freshness: when it was caught up and how many seconds before the answer that was. */
export type Freshness = SummaryFreshness;

export function freshness(asOf: Date | null, now: Date): Freshness {
  return { asOf: asOf?.toISOString() ?? null, ageS: asOf ? Math.max(0, Math.round((now.getTime() - asOf.getTime()) / 1000)) : null };
}

export type Summaries = {
  /** Before a request reads the lagging loggers: a small catch-up when the queue is short and no other process holds the lock. */
  freshen(): Promise<Freshness>;
  /** One run of the worker: fold the count changes, catch the lagging loggers up. */
  tick(): Promise<void>;
  /** Starts the worker (every `intervalMs`). */
  start(intervalMs?: number): void;
  stop(): Promise<void>;
};

/**
 * The summary worker and the requests' catch-up of one process, one at a time within the process (a
 * request waits for a run in progress, then catches up itself); any number of processes may run one, the
 * advisory locks let one work at a time and the others read.
 */
export function createSummaries(deps: SummaryDeps): Summaries {
  let chain: Promise<unknown> = Promise.resolve();
  const serial = <T>(work: () => Promise<T>): Promise<T> => {
    const next = chain.then(work, work);
    chain = next.catch(() => undefined);
    return next;
  };
  let timer: NodeJS.Timeout | null = null;
  let stopped = false;
  // At most one run waits behind the one at work: a run that has not started yet will see every change made
  // before it starts, so a second waiting run would only repeat it. (A catch-up of a million loggers takes
  // minutes; the timer's runs used to pile up behind it and then run back to back.)
  let waiting: Promise<void> | null = null;
  const tick = () =>
    (waiting ??= serial(async () => {
      waiting = null;
      try {
        await foldCounts(deps.sequelize);
        await catchUp(deps);
      } catch (err) {
        deps.logger?.warn({ err }, 'fleet summaries: catch-up failed; the next run retries');
      }
    }));
  return {
    freshen: () =>
      serial(async () => {
        await catchUp(deps, REQUEST_BUDGET);
        return freshness(await laggingAsOf(deps.sequelize), deps.now());
      }),
    tick,
    start(intervalMs = 2000) {
      if (timer || stopped) return;
      timer = setInterval(() => {
        if (!stopped) void tick();
      }, intervalMs);
      timer.unref();
    },
    async stop() {
      stopped = true;
      if (timer) clearInterval(timer);
      timer = null;
      await chain;
    },
  };
}

