// The offer decision as the console sees it: for loggers read from the database (not a check-in), run
// decideOffer on their model's releases with their latest reported state, so "Why no update?" and the
// lagging sites say exactly what the next check-in would decide (at the time `now`).
import { QueryTypes, type Sequelize } from 'sequelize';
import { decideOffer, offerInput, type LoggerFacts, type OfferDecision, type ReportFacts } from '../rollout/decision';
import { loadReleasesOfModel, type OfferableRelease } from '../releases/targeting';

/** The decision's view of a logger, read from its row: coordinates come as the site's two columns. */
export type LoggerForDecision = LoggerFacts & { modelId: string };

/** The columns a LoggerForDecision is read from (alias l = loggers, m = models, s = sites). */
export const DECISION_COLUMNS = `l.id, l.model_id AS "modelId", l.status, l.site_id AS "siteId", COALESCE(l.reported_board, l.board) AS board,
  l.channel, l.firmware, l.security_counter AS "securityCounter", l.supply_v::float8 AS "supplyV",
  m.min_update_supply_v::float8 AS "minUpdateSupplyV", s.latitude::float8 AS latitude, s.longitude::float8 AS longitude,
  s.time_zone AS "timeZone"`;

type ReportRow = ReportFacts & { loggerId: string };

/** Decisions made between two turns of the event loop (about 40 µs each on the bench machine). */
const DECISIONS_PER_SLICE = 500;

/** Decisions for many loggers: one read of each model's releases and one read of their install reports. */
export async function decisionsFor(sequelize: Sequelize, loggers: LoggerForDecision[], now: Date): Promise<Map<string, OfferDecision<OfferableRelease>>> {
  const out = new Map<string, OfferDecision<OfferableRelease>>();
  if (loggers.length === 0) return out;
  const models = [...new Set(loggers.map((l) => l.modelId))];
  const releasesOf = new Map<string, OfferableRelease[]>();
  for (const m of models) releasesOf.set(m, await loadReleasesOfModel(sequelize, m));

  const reports = new Map<string, ReportFacts[]>();
  const ids = loggers.map((l) => l.id);
  for (let i = 0; i < ids.length; i += 5000) {
    const rows = await sequelize.query<ReportRow>(
      `SELECT logger_id AS "loggerId", release_id AS "releaseId", state, reason, updated_at AS "updatedAt", retried_at AS "retriedAt"
         FROM install_reports WHERE logger_id IN (:ids)`,
      { type: QueryTypes.SELECT, replacements: { ids: ids.slice(i, i + 5000) } },
    );
    for (const r of rows) {
      const forLogger = reports.get(r.loggerId) ?? [];
      forLogger.push({ releaseId: r.releaseId, state: r.state, reason: r.reason, updatedAt: new Date(r.updatedAt), retriedAt: r.retriedAt ? new Date(r.retriedAt) : null });
      reports.set(r.loggerId, forLogger);
    }
  }

  for (const [i, l] of loggers.entries()) {
    // Thousands of decisions take seconds: give way to other requests (device check-ins) between slices.
    if (i > 0 && i % DECISIONS_PER_SLICE === 0) await new Promise<void>((resolve) => setImmediate(resolve));
    out.set(l.id, decideOffer(offerInput(l, releasesOf.get(l.modelId) ?? [], reports.get(l.id) ?? [], now)));
  }
  return out;
}
