// The fleet table: GET /api/loggers and its CSV export. Filtering, sorting and paging all happen in
// PostgreSQL; sort keys and filters come from allow-lists (schemas/fleet.ts) and every value is a bound
// replacement. The columns — what each selects, sorts by, presents and exports — are in columns.ts.
//
// Paging: `page` (offset) or a keyset `cursor` — the sort value and id of the last row, so the next
// batch is an index range read whatever the depth. Every sort key and filter is a condition on the
// logger row alone (the keys kept there by migration 0013), so a page is an index range on loggers and
// the model and site are joined for its rows only. The total is exact up to TOTAL_EXACT_UP_TO matches
// and the planner's estimate beyond (totalIsEstimate). The export walks the whole filter by cursor in
// batches, writing as it goes.
import semver from 'semver';
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { loggerScope } from '../auth/policies';
import { problems } from '../http/problem';
import { decodeCursorParts, encodeCursorParts, isTimestampText, UUID_TEXT } from '../http/cursor';
import { likePattern } from '../sites/service';
import { isStrictSemver } from '../../schemas/semver';
import { UNSTABLE_RESETS_24H, type FleetFlag, type FleetList, type FleetSortKey } from '../../schemas/fleet';
import type { LoggersQuery } from '../../schemas/loggers';
import { csvRecord } from './csv';
import { csvOf, FLEET_CSV_HEADER, FLEET_SELECT, presentRow, SORTS, type SortType } from './columns';
import { FLEET_PAGE_JOINS, PROBE_FAULT, TRIM_RESETS } from './sql';
import { SQL_WORDS } from '../db/sql-words';

export type FleetDeps = { sequelize: Sequelize; now: () => Date };

/**
 * Whether a keyset cursor value has the form PostgreSQL writes for each sort type, so that reading it
 * back (CAST(:afterValue AS type)) cannot fail: a forged cursor is a 400, never a database error.
 */
const CURSOR_VALUE: Record<SortType, (value: string) => boolean> = {
  text: (v) => v.length <= 400,
  // firmware_key: semantic-version key elements are letters, digits and '-' (migration 0006), unquoted in array text.
  'text[]': (v) => /^\{(?:[0-9A-Za-z-]{1,300}(?:,[0-9A-Za-z-]{1,300}){0,40})?\}$/.test(v),
  // integer: within PostgreSQL's int4 (−2^31 … 2^31 − 1).
  integer: (v) => /^-?\d{1,10}$/.test(v) && Math.abs(Number(v)) <= 2 ** 31 - 1,
  numeric: (v) => /^-?\d{1,12}(\.\d{1,6})?$/.test(v),
  timestamptz: (v) => v === '-infinity' || isTimestampText(v),
};

type FleetFilter = Omit<LoggersQuery, 'page' | 'pageSize' | 'cursor'>;
type Cursor = { sort: FleetSortKey; dir: 'asc' | 'desc'; value: string; id: string };

/** The cursor that starts a keyset walk at the first row. */
export const KEYSET_START = 'start';

export function encodeCursor(c: Cursor): string {
  return encodeCursorParts([c.sort, c.dir, c.value, c.id]);
}

function decodeCursor(text: string, query: FleetFilter): Cursor {
  const bad = () => problems.badRequest('Check the query: cursor.', [{ path: 'cursor', message: 'is not a cursor from this list; start again from the first page' }]);
  const parts = decodeCursorParts(text, 4);
  if (!parts) throw bad();
  const [sort, dir, value, id] = parts;
  // A cursor belongs to one sort and direction; its id must be a UUID (it is bound, never interpolated).
  if (sort !== query.sort || dir !== query.dir || !UUID_TEXT.test(id)) throw bad();
  // The value is bound too; checking its form keeps a hand-edited cursor a 400 rather than a database error.
  if (!CURSOR_VALUE[SORTS[query.sort].type](value)) throw bad();
  return { sort: query.sort, dir: query.dir, value, id };
}

/**
 * Versions present in the fleet that a semver range admits (few: one per release ever run), or the exact one.
 * The fleet-wide count summary and its pending changes (server/fleet/summaries.ts) name every version a
 * logger runs, in a few dozen rows where the loggers' own index holds one entry a logger; a version whose
 * count has fallen to zero may still be listed until the next fold, which only adds a value no row has.
 */
async function versionsMatching(deps: FleetDeps, version: string): Promise<string[]> {
  if (isStrictSemver(version)) return [version];
  const present = await deps.sequelize.query<{ firmware: string }>(
    `SELECT DISTINCT firmware FROM (SELECT firmware FROM fleet_logger_counts UNION ALL SELECT firmware FROM logger_count_changes) f
      WHERE firmware IS NOT NULL`,
    { type: QueryTypes.SELECT },
  );
  // Pre-releases included, as the decision evaluates upgrade-from ranges (DEVICE_API.md rule 4).
  return present.map((p) => p.firmware).filter((v) => semver.valid(v) !== null && semver.satisfies(v, version, { includePrerelease: true }));
}

/** Per model, what the silent and low-supply flags compare with (few rows: one per hardware model). */
type ModelLimits = { id: string; check_in_interval_s: number; min_update_supply_v: string };

/**
 * A flag as conditions on the logger row alone, one per case: a row has the flag when it meets any of
 * them. Silent and low supply compare with the logger's model; spelled out per model (`model_id = … AND
 * last seen before …`), each case is one range of the flag's own index (migration 0023: the same
 * expressions, the flag's other conditions as its predicate), and the planner estimates them from those
 * columns' statistics. The same rules as sql.ts SILENT and LOW_SUPPLY, which the rows' flags column shows
 * (the overview counts with countFlag, case by case).
 */
async function flagCases(deps: FleetDeps, flag: FleetFlag, now: Date, replacements: Record<string, unknown>): Promise<string[]> {
  if (flag === 'unstable') return [`(l.resets_24h >= ${UNSTABLE_RESETS_24H})`];
  if (flag === 'probe_fault') return [PROBE_FAULT];
  const models = await deps.sequelize.query<ModelLimits>('SELECT id, check_in_interval_s, min_update_supply_v::text AS min_update_supply_v FROM models ORDER BY id', {
    type: QueryTypes.SELECT,
  });
  return models.map((m, i) => {
    replacements[`flagModel${i}`] = m.id;
    if (flag === 'silent') {
      replacements[`silentBefore${i}`] = new Date(now.getTime() - 3 * m.check_in_interval_s * 1000).toISOString();
      return `(l.status = :enrolled AND l.model_id = :flagModel${i} AND COALESCE(l.last_seen_at, '-infinity'::timestamptz) < CAST(:silentBefore${i} AS timestamptz))`;
    }
    replacements[`supplyMin${i}`] = m.min_update_supply_v;
    return `(l.status <> :retired AND l.supply_v IS NOT NULL AND l.model_id = :flagModel${i} AND COALESCE(l.supply_v, -1) < CAST(:supplyMin${i} AS numeric))`;
  });
}

/** A flag as one condition on the logger row: any of its cases. */
async function flagCondition(deps: FleetDeps, flag: FleetFlag, now: Date, replacements: Record<string, unknown>): Promise<string> {
  const cases = await flagCases(deps, flag, now, replacements);
  return cases.length === 0 ? 'false' : `(${cases.join(' OR ')})`;
}

type Where = { conditions: string[]; replacements: Record<string, unknown> };

/** The filter as conditions on the logger row `l` alone, so a page and a count are index ranges on loggers. */
async function whereOf(deps: FleetDeps, actor: Actor, query: Partial<FleetFilter>, now: Date): Promise<Where> {
  const conditions: string[] = [];
  const replacements: Record<string, unknown> = { ...SQL_WORDS, now: now.toISOString() };
  if (query.q) {
    // Serial, site name and customer in one text with a trigram index (migration 0013).
    conditions.push('l.search_text ILIKE :q');
    replacements.q = likePattern(query.q);
  }
  // Plain equality filters: the query key, and the column it is compared with (board regardless of case).
  const equals: [keyof FleetFilter & ('siteId' | 'modelId' | 'status' | 'board' | 'channel'), string][] = [
    ['siteId', 'l.site_id = :siteId'],
    ['modelId', 'l.model_id = :modelId'],
    ['status', 'l.status = :status'],
    ['board', 'lower(l.board) = lower(:board)'],
    ['channel', 'l.channel = :channel'],
  ];
  for (const [key, condition] of equals) {
    if (!query[key]) continue;
    conditions.push(condition);
    replacements[key] = query[key];
  }
  if (query.version) {
    const versions = await versionsMatching(deps, query.version);
    if (versions.length === 0) conditions.push('false');
    else {
      conditions.push('l.firmware IN (:versions)');
      replacements.versions = versions;
    }
  }
  if (query.flag) conditions.push(await flagCondition(deps, query.flag, now, replacements));
  if (query.updateState) {
    // The rank's index answers the filter too (heliodor_update_rank of a constant is a constant).
    conditions.push('l.update_rank = heliodor_update_rank(:updateState)');
    replacements.updateState = query.updateState;
  }
  // The loggers the actor may read (server/auth/policies.ts): an integrator's sites and registrations.
  const scope = loggerScope(actor, 'l');
  conditions.push(scope.sql);
  Object.assign(replacements, scope.replacements);
  return { conditions, replacements };
}

/** Before a read that sorts or filters by resets in 24 h, the window is moved to the clock (sql.ts TRIM_RESETS). */
async function trimResetsIfRead(deps: FleetDeps, query: Partial<FleetFilter>, now: Date) {
  if (query.sort !== 'resets24h' && query.flag !== 'unstable') return;
  await deps.sequelize.query(TRIM_RESETS, { replacements: { now: now.toISOString() } });
}

/**
 * How many loggers the actor may read carry the flag at `now`: exactly the rows the table's flag filter
 * lists, by the same conditions, so the overview's figure and the list its link opens cannot disagree.
 * Counted case by case (flagCases: a model's silent or low-supply loggers), each count an index-only
 * range of the flag's index, and the counts added — the cases are disjoint, one model each.
 */
export async function countFlag(deps: FleetDeps, actor: Actor, flag: FleetFlag, now: Date): Promise<number> {
  const where = await whereOf(deps, actor, {}, now);
  const cases = await flagCases(deps, flag, now, where.replacements);
  if (cases.length === 0) return 0;
  await trimResetsIfRead(deps, { flag }, now);
  const counts = cases.map((c) => `(SELECT count(*) FROM loggers l WHERE ${[...where.conditions, c].join(' AND ')})`);
  const [row] = await deps.sequelize.query<{ n: number }>(`SELECT (${counts.join(' + ')})::int AS n`, {
    type: QueryTypes.SELECT,
    replacements: where.replacements,
  });
  return row.n;
}

/** A row as the query answers it: every column's selected values (columns.ts), the id and the sort value. */
type RowRecord = { id: string; sort_value: string } & Record<string, unknown>;

/** The page's query: the ids from an index range on loggers alone, then each row's columns for those ids. */
export function pageStatement(where: Where, query: FleetFilter, page: { limit: number; offset: number; after?: Cursor }) {
  const sort = SORTS[query.sort];
  const dir = query.dir === 'desc' ? 'DESC' : 'ASC';
  const conditions = [...where.conditions];
  const replacements: Record<string, unknown> = { ...where.replacements, limit: page.limit, offset: page.offset };
  if (page.after) {
    conditions.push(`(${sort.expr}, l.id) ${dir === 'DESC' ? '<' : '>'} (CAST(:afterValue AS ${sort.type}), CAST(:afterId AS uuid))`);
    replacements.afterValue = page.after.value;
    replacements.afterId = page.after.id;
  }
  const sql = `
    WITH page AS (
      SELECT l.id, ${sort.expr} AS sort_key
        FROM loggers l
       ${conditions.length ? `WHERE ${conditions.join(' AND ')}` : ''}
       ORDER BY ${sort.expr} ${dir}, l.id ${dir}
       LIMIT :limit OFFSET :offset)
    SELECT l.id, ${FLEET_SELECT}, p.sort_key::text AS sort_value
      FROM page p
      JOIN loggers l ON l.id = p.id
      ${FLEET_PAGE_JOINS}
     ORDER BY p.sort_key ${dir}, l.id ${dir}`;
  return { sql, replacements };
}

/** The count's query: the matching rows up to one more than TOTAL_EXACT_UP_TO. */
export function countStatement(where: Where) {
  return {
    sql: `SELECT count(*)::int AS n FROM (SELECT 1 FROM loggers l ${where.conditions.length ? `WHERE ${where.conditions.join(' AND ')}` : ''} LIMIT ${TOTAL_EXACT_UP_TO + 1}) x`,
    replacements: where.replacements,
  };
}

async function readRows(deps: FleetDeps, where: Where, query: FleetFilter, page: { limit: number; offset: number; after?: Cursor }): Promise<RowRecord[]> {
  const { sql, replacements } = pageStatement(where, query, page);
  return deps.sequelize.query<RowRecord>(sql, { type: QueryTypes.SELECT, replacements });
}

/**
 * Up to this many matching loggers the total is counted exactly; beyond, it is the planner's estimate
 * (EXPLAIN's row estimate for the filter), and the answer says so (totalIsEstimate), so a page never
 * waits for a count of the whole fleet.
 */
export const TOTAL_EXACT_UP_TO = 1000;

async function totalOf(deps: FleetDeps, where: Where): Promise<{ total: number; totalIsEstimate: boolean }> {
  const count = countStatement(where);
  const [{ n }] = await deps.sequelize.query<{ n: number }>(count.sql, { type: QueryTypes.SELECT, replacements: count.replacements });
  if (n <= TOTAL_EXACT_UP_TO) return { total: n, totalIsEstimate: false };
  const [plan] = await deps.sequelize.query<{ 'QUERY PLAN': [{ Plan: { 'Plan Rows': number } }] }>(
    `EXPLAIN (FORMAT JSON) SELECT 1 FROM loggers l ${where.conditions.length ? `WHERE ${where.conditions.join(' AND ')}` : ''}`,
    { type: QueryTypes.SELECT, replacements: where.replacements },
  );
  // More than TOTAL_EXACT_UP_TO match for certain, whatever the estimate says.
  return { total: Math.max(TOTAL_EXACT_UP_TO + 1, Math.round(plan['QUERY PLAN'][0].Plan['Plan Rows'])), totalIsEstimate: true };
}

export async function listFleet(deps: FleetDeps, actor: Actor, query: LoggersQuery): Promise<FleetList> {
  const now = deps.now();
  const where = await whereOf(deps, actor, query, now);
  let page = query.page;
  let after: Cursor | undefined;
  // cursor: a page number (what page mode answers), "start" (keyset mode from the first row), or a keyset cursor.
  const keyset = query.cursor !== undefined && !/^[1-9]\d{0,8}$/.test(query.cursor);
  if (query.cursor && !keyset) page = Number(query.cursor);
  else if (keyset && query.cursor !== KEYSET_START) after = decodeCursor(query.cursor!, query);
  if (keyset) page = 1;

  await trimResetsIfRead(deps, query, now);
  const [total, records] = await Promise.all([
    totalOf(deps, where),
    readRows(deps, where, query, { limit: query.pageSize + 1, offset: (page - 1) * query.pageSize, after }),
  ]);
  const more = records.length > query.pageSize;
  const rows = records.slice(0, query.pageSize);
  let nextCursor: string | undefined;
  if (more) {
    const last = rows[rows.length - 1];
    // Page mode keeps answering page numbers; cursor mode answers the next keyset cursor.
    nextCursor = keyset ? encodeCursor({ sort: query.sort, dir: query.dir, value: last.sort_value, id: last.id }) : String(page + 1);
  }
  return { rows: rows.map(presentRow), ...total, ...(nextCursor ? { nextCursor } : {}) };
}

/**
 * Every row the filter matches, in its sort order, read in keyset batches and handed on as CSV text. The
 * next batch is read while the current one is written, so the database and the client's link work at once.
 */
export async function exportFleet(
  deps: FleetDeps,
  actor: Actor,
  query: LoggersQuery,
  write: (chunk: string) => Promise<void>,
  batchSize = 2500,
): Promise<number> {
  const now = deps.now();
  const where = await whereOf(deps, actor, query, now);
  await trimResetsIfRead(deps, query, now);
  await write(csvRecord([...FLEET_CSV_HEADER]));
  const batch = (after?: Cursor) => readRows(deps, where, query, { limit: batchSize, offset: 0, after });
  let next: Promise<RowRecord[]> | null = batch();
  let count = 0;
  while (next) {
    const records: RowRecord[] = await next;
    const last = records[records.length - 1];
    next = records.length === batchSize ? batch({ sort: query.sort, dir: query.dir, value: last.sort_value, id: last.id }) : null;
    try {
      if (records.length > 0) await write(records.map((r) => csvOf(presentRow(r))).join(''));
    } catch (err) {
      next?.catch(() => undefined); // the client went away: the read ahead is not wanted
      throw err;
    }
    count += records.length;
  }
  return count;
}
