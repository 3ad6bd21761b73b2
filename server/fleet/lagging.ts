// Lagging sites: sites with at least one enrolled logger below the current release of its
// channel (semantic-version precedence, in SQL on firmware_key), and for each such logger the reason from
// the offer decision for that release — or "silent" when it has not checked in for 3 intervals, since
// nothing can reach it until it does.
//
// The reasons come from the lagging summary (summaries.ts: lagging_loggers, one row per logger behind
// with its reason, and lagging_sites, their roll-up per site), which the summary worker keeps; a request
// catches it up first when little is queued, and every answer says how fresh it is (`asOf`, `ageS`).
// Sites are filtered, sorted and paged in PostgreSQL on the roll-up; a reason filter reads the per-site
// reason counts, so no decision runs at request time.
//
// Everything here is read through the caller's site scope (server/auth/policies.ts): an integrator
// sees only the sites assigned to them, in the list, its CSV and a lagging site's page alike.
import { QueryTypes } from 'sequelize';
import type { Actor } from '../auth/actor';
import { fleet, may, siteScope } from '../auth/policies';
import { LAGGING_REASON_LABELS, type LaggingList, type LaggingLogger, type LaggingQuery, type LaggingReason, type LaggingSite } from '../../schemas/fleet';
import { likePattern } from '../sites/service';
import { csvRecord, safeText } from './csv';
import type { FleetDeps } from './table';
import type { Summaries } from './summaries';
import { SQL_WORDS } from '../db/sql-words';

export type LaggingDeps = FleetDeps & { summaries: Summaries };

type SiteRow = {
  site_id: string;
  site_name: string;
  customer: string;
  time_zone: string;
  behind: number;
  total: number;
  oldest_version: string | null;
  lagging_since: Date;
  last_contact_at: Date | null;
  reasons: Partial<Record<LaggingReason, number>>;
};

type LoggerRow = { logger_id: string; site_id: string; serial: string; firmware: string; target_release_id: string; target_version: string; reason: LaggingReason; detail: string };

/** The lagging sites of the filter the actor may see, one page (or all of them). */
async function siteRows(deps: FleetDeps, actor: Actor, query: LaggingQuery, paged: boolean): Promise<{ rows: SiteRow[]; total: number }> {
  const scope = siteScope(actor, 'g.site_id');
  const conditions: string[] = [scope.sql];
  const replacements: Record<string, unknown> = { ...SQL_WORDS, ...scope.replacements };
  if (query.customer) {
    conditions.push('s.customer ILIKE :customer');
    replacements.customer = likePattern(query.customer);
  }
  if (query.siteId) {
    conditions.push('g.site_id = :siteId');
    replacements.siteId = query.siteId;
  }
  if (query.reason) {
    conditions.push('g.reasons ? :reason');
    replacements.reason = query.reason;
  }
  // Allow-listed: the sort column and direction come from these two tables only.
  const sortColumn = query.sort === 'behind' ? 'g.behind' : 'g.lagging_since';
  const dir = query.dir ?? (query.sort === 'behind' ? 'desc' : 'asc');
  // The site's name is kept on the summary row (migration 0021), so the order is an index range on
  // lagging_sites alone and the site is joined for the page's rows; the count joins sites only to filter by customer.
  const order = `${sortColumn} ${dir === 'desc' ? 'DESC' : 'ASC'}, g.site_name ASC, g.site_id ASC`;
  const from = `FROM lagging_sites g JOIN sites s ON s.id = g.site_id WHERE ${conditions.join(' AND ')}`;
  const counted = query.customer ? from : `FROM lagging_sites g WHERE ${conditions.join(' AND ')}`;
  const [[{ total }], rows] = await Promise.all([
    deps.sequelize.query<{ total: number }>(`SELECT count(*)::int AS total ${counted}`, { type: QueryTypes.SELECT, replacements }),
    deps.sequelize.query<SiteRow>(
      `WITH page AS (
         SELECT g.site_id, g.site_name, s.customer, s.time_zone, g.behind, g.lagging_since, g.oldest_version, g.reasons
           ${from} ORDER BY ${order} ${paged ? 'LIMIT :limit OFFSET :offset' : ''}
       )
       SELECT p.*, t.total, t.last_contact_at
         FROM page p
         CROSS JOIN LATERAL (SELECT count(*)::int AS total, max(x.last_seen_at) AS last_contact_at
                               FROM loggers x WHERE x.site_id = p.site_id AND x.status = :enrolled) t
        ORDER BY ${order.replaceAll('g.', 'p.')}`,
      { type: QueryTypes.SELECT, replacements: { ...replacements, limit: query.pageSize, offset: (query.page - 1) * query.pageSize } },
    ),
  ]);
  return { rows, total };
}

/** Every logger behind at the sites, with its reason, oldest version first. */
async function loggersAt(deps: FleetDeps, siteIds: string[]): Promise<Map<string, LaggingLogger[]>> {
  const bySite = new Map<string, LaggingLogger[]>();
  if (siteIds.length === 0) return bySite;
  const rows = await deps.sequelize.query<LoggerRow>(
    `SELECT g.logger_id, g.site_id, l.serial, g.firmware, g.target_release_id, g.target_version, g.reason, g.detail
       FROM lagging_loggers g JOIN loggers l ON l.id = g.logger_id
      WHERE g.site_id IN (:siteIds) ORDER BY g.site_id, g.firmware_key, lower(l.serial)`,
    { type: QueryTypes.SELECT, replacements: { siteIds } },
  );
  for (const r of rows) {
    const list = bySite.get(r.site_id) ?? [];
    list.push({
      id: r.logger_id,
      serial: r.serial,
      firmware: r.firmware,
      targetReleaseId: r.target_release_id,
      targetVersion: r.target_version,
      reason: r.reason,
      reasonLabel: LAGGING_REASON_LABELS[r.reason],
      detail: r.detail,
    });
    bySite.set(r.site_id, list);
  }
  return bySite;
}

function present(r: SiteRow, loggers: LaggingLogger[], can: LaggingSite['can']): LaggingSite {
  return {
    siteId: r.site_id,
    siteName: r.site_name,
    customer: r.customer,
    timeZone: r.time_zone,
    behind: r.behind,
    total: r.total,
    oldestVersion: r.oldest_version,
    laggingSince: new Date(r.lagging_since).toISOString(),
    lastContactAt: r.last_contact_at ? new Date(r.last_contact_at).toISOString() : null,
    reasons: r.reasons,
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

/** Lagging sites the actor may see, one page (or all of them, for the CSV), with the summary's freshness. */
export async function laggingSites(
  deps: LaggingDeps,
  actor: Actor,
  query: LaggingQuery,
  all = false,
): Promise<LaggingList> {
  const fresh = await deps.summaries.freshen();
  const { rows, total } = await siteRows(deps, actor, query, !all);
  const siteIds = rows.map((r) => r.site_id);
  const [loggersBySite, integratorsOf] = await Promise.all([loggersAt(deps, siteIds), siteIntegrators(deps, siteIds)]);
  const retry = may(actor, 'retry', fleet);
  const presented = rows.map((r) =>
    present(r, loggersBySite.get(r.site_id) ?? [], { retry, addNote: may(actor, 'addNote', { kind: 'site', integratorIds: integratorsOf.get(r.site_id) ?? [] }) }),
  );
  const more = !all && query.page * query.pageSize < total;
  return { rows: presented, total, ...(more ? { nextCursor: String(query.page + 1) } : {}), ...fresh };
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
export async function exportLagging(deps: LaggingDeps, actor: Actor, query: LaggingQuery, write: (chunk: string) => Promise<void>): Promise<number> {
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
