// Lagging sites: sites with at least one enrolled logger below the current release of its
// channel (semantic-version precedence, in SQL on firmware_key), and for each such logger the reason from
// the offer decision for that release — or "silent" when it has not checked in for 3 intervals, since
// nothing can reach it until it does.
//
// The sites are grouped, sorted and paged in PostgreSQL; the decision (pure, in JS: cohort hash,
// daylight) runs only for the loggers of the page's sites — or, when filtering by reason, for every
// logger behind the current release (that filter needs the reason of each).
//
// Everything here is read through the caller's site scope (server/auth/policies.ts): an integrator
// sees only the sites assigned to them, in the list, its CSV and a lagging site's page alike.
import { QueryTypes } from 'sequelize';
import type { Actor } from '../auth/actor';
import { fleet, may, siteScope, type SqlScope } from '../auth/policies';
import type { OfferDecision, ReasonCode } from '../rollout/decision';
import { LAGGING_REASON_LABELS, type LaggingLogger, type LaggingQuery, type LaggingReason, type LaggingSite } from '../../schemas/fleet';
import { likePattern } from '../sites/service';
import { csvRecord, safeText } from './csv';
import { CURRENT_RELEASES, SILENT } from './sql';
import { DECISION_COLUMNS, decisionsFor, type LoggerForDecision } from './verdicts';
import type { FleetDeps } from './table';
import { SQL_WORDS } from '../db/sql-words';

/** Enrolled loggers below the current release of their channel (firmware reported). */
const BEHIND_FROM = `
  FROM loggers l
  JOIN models m ON m.id = l.model_id
  JOIN sites s ON s.id = l.site_id
  JOIN current_releases cr ON cr.model_id = l.model_id AND cr.channel = l.channel
  WHERE l.status = :enrolled AND l.firmware IS NOT NULL AND l.firmware_key <> '{}' AND l.firmware_key < cr.version_key`;

const REASON_OF: Partial<Record<ReasonCode, LaggingReason>> = {
  low_supply: 'low_supply',
  board_not_supported: 'board_not_supported',
  outside_daylight_window: 'outside_daylight_window',
  outside_share: 'outside_share',
  not_pilot_site: 'not_pilot_site',
  not_live: 'release_not_live',
  failed_awaiting_retry: 'failed_awaiting_retry',
  needs_stepping_stone: 'needs_stepping_stone',
  security_counter_too_low: 'security_counter_too_low',
  manifest_expired: 'manifest_expired',
  offered: 'offered',
  stepping_stone: 'offered',
  superseded: 'offered',
};

type BehindRow = LoggerForDecision & { serial: string; silent: boolean; currentId: string; currentVersion: string; siteName: string; customer: string };

type SiteRow = {
  site_id: string;
  site_name: string;
  customer: string;
  behind: number;
  total: number;
  oldest_version: string | null;
  lagging_since: Date;
  last_contact_at: Date | null;
};

/** Why one logger lacks the current release: silent first, else the decision's verdict for that release. */
function reasonOf(row: BehindRow, decision: OfferDecision | undefined): { reason: LaggingReason; detail: string } {
  if (row.silent) return { reason: 'silent', detail: 'No check-in for 3 intervals; nothing reaches the logger until it checks in again.' };
  const verdict = decision?.considered.find((v) => v.releaseId === row.currentId);
  if (!verdict) return { reason: 'other', detail: 'The release was not considered.' };
  // A guard that blocks the release chosen instead (a stepping stone, or a newer pilot) is what holds the logger now.
  if (verdict.reason === 'needs_stepping_stone' || verdict.reason === 'superseded') {
    const guard = decision!.considered.find((v) => v.reason === 'low_supply' || v.reason === 'outside_daylight_window');
    if (guard) return { reason: REASON_OF[guard.reason]!, detail: guard.detail };
  }
  return { reason: REASON_OF[verdict.reason] ?? 'other', detail: verdict.detail };
}

/**
 * A condition every logger lagging for the reason meets, so a reason filter runs the offer decision only
 * for loggers that can have it (the decision still names the reason). Silent loggers lag for "silent"
 * and nothing else; low supply needs a reading below the model's guard; the daylight window needs a
 * site with coordinates; an unsupported board is not among the current release's boards; a failed
 * install awaiting retry has a failed report of that release.
 */
const CAN_LAG_FOR: Partial<Record<LaggingReason, string>> = {
  low_supply: 'l.supply_v IS NOT NULL AND l.supply_v < m.min_update_supply_v',
  outside_daylight_window: 's.latitude IS NOT NULL AND s.longitude IS NOT NULL',
  board_not_supported: 'NOT EXISTS (SELECT 1 FROM releases r WHERE r.id = cr.id AND COALESCE(l.reported_board, l.board) = ANY (r.boards))',
  failed_awaiting_retry: `EXISTS (SELECT 1 FROM install_reports ir WHERE ir.logger_id = l.id AND ir.release_id = cr.id AND ir.state = :failed)`,
};

function canLagFor(reason: LaggingReason): string {
  if (reason === 'silent') return SILENT;
  return [`NOT ${SILENT}`, CAN_LAG_FOR[reason]].filter(Boolean).join(' AND ');
}

async function behindLoggers(
  deps: FleetDeps,
  scope: SqlScope,
  siteIds: string[] | null,
  customer: string | undefined,
  now: Date,
  reason?: LaggingReason,
): Promise<BehindRow[]> {
  const conditions: string[] = [scope.sql];
  if (reason) conditions.push(`(${canLagFor(reason)})`);
  const replacements: Record<string, unknown> = { ...SQL_WORDS, ...scope.replacements, now: now.toISOString() };
  if (siteIds) {
    if (siteIds.length === 0) return [];
    conditions.push('l.site_id IN (:siteIds)');
    replacements.siteIds = siteIds;
  }
  if (customer) {
    conditions.push('s.customer ILIKE :customer');
    replacements.customer = likePattern(customer);
  }
  return deps.sequelize.query<BehindRow>(
    `WITH current_releases AS (${CURRENT_RELEASES})
     SELECT ${DECISION_COLUMNS}, l.serial, ${SILENT} AS silent, cr.id AS "currentId", cr.version AS "currentVersion",
            s.name AS "siteName", s.customer
       ${BEHIND_FROM} ${conditions.map((c) => `AND ${c}`).join(' ')}
      ORDER BY l.site_id, l.firmware_key, lower(l.serial)`,
    { type: QueryTypes.SELECT, replacements },
  );
}

async function withReasons(deps: FleetDeps, rows: BehindRow[], now: Date): Promise<Map<string, LaggingLogger[]>> {
  const decisions = await decisionsFor(deps.sequelize, rows, now);
  const bySite = new Map<string, LaggingLogger[]>();
  for (const r of rows) {
    const { reason, detail } = reasonOf(r, decisions.get(r.id));
    const list = bySite.get(r.siteId!) ?? [];
    list.push({ id: r.id, serial: r.serial, firmware: r.firmware, targetReleaseId: r.currentId, targetVersion: r.currentVersion, reason, reasonLabel: LAGGING_REASON_LABELS[reason], detail });
    bySite.set(r.siteId!, list);
  }
  return bySite;
}

async function siteRows(
  deps: FleetDeps,
  scope: SqlScope,
  query: LaggingQuery,
  now: Date,
  onlySites: string[] | null,
  paged: boolean,
): Promise<{ rows: SiteRow[]; total: number }> {
  const conditions: string[] = [scope.sql];
  const replacements: Record<string, unknown> = { ...SQL_WORDS, ...scope.replacements, now: now.toISOString() };
  if (query.customer) {
    conditions.push('s.customer ILIKE :customer');
    replacements.customer = likePattern(query.customer);
  }
  if (query.siteId) {
    conditions.push('l.site_id = :siteId');
    replacements.siteId = query.siteId;
  }
  if (onlySites) {
    if (onlySites.length === 0) return { rows: [], total: 0 };
    conditions.push('l.site_id IN (:onlySites)');
    replacements.onlySites = onlySites;
  }
  // Allow-listed: the sort column and direction come from these two tables only.
  const sortColumn = query.sort === 'behind' ? 'behind' : 'lagging_since';
  const dir = query.dir ?? (query.sort === 'behind' ? 'desc' : 'asc');
  const order = `${sortColumn} ${dir === 'desc' ? 'DESC' : 'ASC'}, site_name ASC, site_id ASC`;
  const grouped = `
    WITH current_releases AS (${CURRENT_RELEASES}),
    lagging AS (
      SELECT l.site_id, count(*)::int AS behind, min(cr.since) AS lagging_since,
             (array_agg(l.firmware ORDER BY l.firmware_key))[1] AS oldest_version
        ${BEHIND_FROM} ${conditions.map((c) => `AND ${c}`).join(' ')}
       GROUP BY l.site_id
    )
    SELECT g.site_id, s.name AS site_name, s.customer, g.behind, g.lagging_since, g.oldest_version,
           t.total, t.last_contact_at
      FROM lagging g JOIN sites s ON s.id = g.site_id
      CROSS JOIN LATERAL (SELECT count(*)::int AS total, max(x.last_seen_at) AS last_contact_at
                            FROM loggers x WHERE x.site_id = g.site_id AND x.status = :enrolled) t`;
  const [{ total }] = await deps.sequelize.query<{ total: number }>(`SELECT count(*)::int AS total FROM (${grouped}) q`, {
    type: QueryTypes.SELECT,
    replacements,
  });
  const rows = await deps.sequelize.query<SiteRow>(
    `SELECT * FROM (${grouped}) q ORDER BY ${order} ${paged ? 'LIMIT :limit OFFSET :offset' : ''}`,
    { type: QueryTypes.SELECT, replacements: { ...replacements, limit: query.pageSize, offset: (query.page - 1) * query.pageSize } },
  );
  return { rows, total };
}

function present(r: SiteRow, loggers: LaggingLogger[], can: LaggingSite['can']): LaggingSite {
  const reasons: Partial<Record<LaggingReason, number>> = {};
  for (const l of loggers) reasons[l.reason] = (reasons[l.reason] ?? 0) + 1;
  return {
    siteId: r.site_id,
    siteName: r.site_name,
    customer: r.customer,
    behind: r.behind,
    total: r.total,
    oldestVersion: r.oldest_version,
    laggingSince: new Date(r.lagging_since).toISOString(),
    lastContactAt: r.last_contact_at ? new Date(r.last_contact_at).toISOString() : null,
    reasons,
    loggers,
    can,
  };
}

/** The integrators assigned to each of the sites (what the site policies read). */
async function siteIntegrators(deps: FleetDeps, siteIds: string[]): Promise<Map<string, string[]>> {
  const out = new Map<string, string[]>();
  if (siteIds.length === 0) return out;
  const links = await deps.sequelize.query<{ site_id: string; user_id: string }>('SELECT site_id, user_id FROM site_integrators WHERE site_id IN (:siteIds)', {
    type: QueryTypes.SELECT,
    replacements: { siteIds },
  });
  for (const l of links) out.set(l.site_id, [...(out.get(l.site_id) ?? []), l.user_id]);
  return out;
}

/** Lagging sites the actor may see, one page (or all of them, for the CSV). */
export async function laggingSites(deps: FleetDeps, actor: Actor, query: LaggingQuery, all = false): Promise<{ rows: LaggingSite[]; total: number; nextCursor?: string }> {
  const now = deps.now();
  const scope = siteScope(actor, 'l.site_id');
  let onlySites: string[] | null = null;
  if (query.reason) {
    // The sites where some logger lags for the reason: decisions only for the loggers that can.
    const candidates = await withReasons(deps, await behindLoggers(deps, scope, query.siteId ? [query.siteId] : null, query.customer, now, query.reason), now);
    onlySites = [...candidates].filter(([, list]) => list.some((l) => l.reason === query.reason)).map(([site]) => site);
  }
  const { rows, total } = await siteRows(deps, scope, query, now, onlySites, !all);
  // Every logger behind at the listed sites, each with its reason.
  const reasonsBySite = await withReasons(deps, await behindLoggers(deps, scope, rows.map((r) => r.site_id), undefined, now), now);
  const integratorsOf = await siteIntegrators(deps, rows.map((r) => r.site_id));
  const retry = may(actor, 'retry', fleet);
  const presented = rows.map((r) =>
    present(r, reasonsBySite.get(r.site_id) ?? [], { retry, addNote: may(actor, 'addNote', { kind: 'site', integratorIds: integratorsOf.get(r.site_id) ?? [] }) }),
  );
  const more = !all && query.page * query.pageSize < total;
  return { rows: presented, total, ...(more ? { nextCursor: String(query.page + 1) } : {}) };
}

export const LAGGING_CSV_HEADER = [
  'site',
  'customer',
  'site_behind',
  'site_total',
  'lagging_since',
  'last_contact_at',
  'serial',
  'firmware',
  'target_version',
  'reason',
  'reason_label',
] as const;

/** Every lagging site of the filter, one record per logger behind (the site's columns repeated). */
export async function exportLagging(deps: FleetDeps, actor: Actor, query: LaggingQuery, write: (chunk: string) => Promise<void>): Promise<number> {
  const { rows } = await laggingSites(deps, actor, query, true);
  await write(csvRecord([...LAGGING_CSV_HEADER]));
  let count = 0;
  for (const site of rows) {
    const lines = site.loggers.map((l) =>
      csvRecord([
        safeText(site.siteName),
        safeText(site.customer),
        site.behind,
        site.total,
        site.laggingSince,
        site.lastContactAt,
        safeText(l.serial),
        safeText(l.firmware),
        l.targetVersion,
        l.reason,
        l.reasonLabel,
      ]),
    );
    count += lines.length;
    await write(lines.join(''));
  }
  return count;
}
