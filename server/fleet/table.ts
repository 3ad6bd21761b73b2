// The fleet table: GET /api/loggers and its CSV export. Filtering, sorting and paging all happen in
// PostgreSQL; sort keys and filters come from allow-lists (schemas/fleet.ts) and every value is a bound
// replacement. The columns — what each selects, sorts by, presents and exports — are in columns.ts.
//
// Paging: `page` (offset) or a keyset `cursor` — the sort value and id of the last row, so the next
// batch is an index range read whatever the depth. The export walks the whole filter by cursor in
// batches, writing as it goes.
import semver from 'semver';
import { QueryTypes, type Sequelize } from 'sequelize';
import type { Actor } from '../auth/actor';
import { loggerScope } from '../auth/policies';
import { problems } from '../http/problem';
import { decodeCursorParts, encodeCursorParts, isTimestampText, UUID_TEXT } from '../http/cursor';
import { likePattern } from '../sites/service';
import { isStrictSemver } from '../../schemas/semver';
import type { FleetSortKey } from '../../schemas/fleet';
import type { LoggerRow, LoggersQuery } from '../../schemas/loggers';
import { csvRecord } from './csv';
import { csvOf, FLEET_CSV_HEADER, FLEET_SELECT, presentRow, SORTS, type SortType } from './columns';
import { CURRENT_RELEASES, FLAG_SQL, FLEET_FROM, UPDATE_STATE } from './sql';
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

/** Versions present in the fleet that a semver range admits (few: one per release ever run), or the exact one. */
async function versionsMatching(deps: FleetDeps, version: string): Promise<string[]> {
  if (isStrictSemver(version)) return [version];
  const present = await deps.sequelize.query<{ firmware: string }>('SELECT DISTINCT firmware FROM loggers WHERE firmware IS NOT NULL', {
    type: QueryTypes.SELECT,
  });
  // Pre-releases included, as the decision evaluates upgrade-from ranges (DEVICE_API.md rule 4).
  return present.map((p) => p.firmware).filter((v) => semver.valid(v) !== null && semver.satisfies(v, version, { includePrerelease: true }));
}

async function whereOf(deps: FleetDeps, actor: Actor, query: FleetFilter, now: Date) {
  const conditions: string[] = [];
  const replacements: Record<string, unknown> = { ...SQL_WORDS, now: now.toISOString() };
  if (query.q) {
    conditions.push('(l.serial ILIKE :q OR s.name ILIKE :q OR s.customer ILIKE :q)');
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
  if (query.flag) conditions.push(FLAG_SQL[query.flag]);
  if (query.updateState) {
    conditions.push(`${UPDATE_STATE} = :updateState`);
    replacements.updateState = query.updateState;
  }
  // The loggers the actor may read (server/auth/policies.ts): an integrator's sites and registrations.
  const scope = loggerScope(actor, 'l');
  conditions.push(scope.sql);
  Object.assign(replacements, scope.replacements);
  return { conditions, replacements };
}

/** A row as the query answers it: every column's selected values (columns.ts), the id and the sort value. */
type RowRecord = { id: string; sort_value: string } & Record<string, unknown>;

async function readRows(
  deps: FleetDeps,
  where: { conditions: string[]; replacements: Record<string, unknown> },
  query: FleetFilter,
  page: { limit: number; offset: number; after?: Cursor },
): Promise<RowRecord[]> {
  const sort = SORTS[query.sort];
  const dir = query.dir === 'desc' ? 'DESC' : 'ASC';
  const conditions = [...where.conditions];
  const replacements: Record<string, unknown> = { ...where.replacements, limit: page.limit, offset: page.offset };
  if (page.after) {
    conditions.push(`(${sort.expr}, l.id) ${dir === 'DESC' ? '<' : '>'} (CAST(:afterValue AS ${sort.type}), CAST(:afterId AS uuid))`);
    replacements.afterValue = page.after.value;
    replacements.afterId = page.after.id;
  }
  return deps.sequelize.query<RowRecord>(
    `WITH current_releases AS (${CURRENT_RELEASES})
     SELECT l.id, ${FLEET_SELECT}, (${sort.expr})::text AS sort_value
       ${FLEET_FROM}
      ${conditions.length ? `WHERE ${conditions.join(' AND ')}` : ''}
      ORDER BY ${sort.expr} ${dir}, l.id ${dir}
      LIMIT :limit OFFSET :offset`,
    { type: QueryTypes.SELECT, replacements },
  );
}

export async function listFleet(deps: FleetDeps, actor: Actor, query: LoggersQuery): Promise<{ rows: LoggerRow[]; total: number; nextCursor?: string }> {
  const now = deps.now();
  const where = await whereOf(deps, actor, query, now);
  let page = query.page;
  let after: Cursor | undefined;
  // cursor: a page number (what page mode answers), "start" (keyset mode from the first row), or a keyset cursor.
  const keyset = query.cursor !== undefined && !/^[1-9]\d{0,8}$/.test(query.cursor);
  if (query.cursor && !keyset) page = Number(query.cursor);
  else if (keyset && query.cursor !== KEYSET_START) after = decodeCursor(query.cursor!, query);
  if (keyset) page = 1;

  const [[{ total }], records] = await Promise.all([
    deps.sequelize.query<{ total: number }>(
      `WITH current_releases AS (${CURRENT_RELEASES}) SELECT count(*)::int AS total ${FLEET_FROM}
       ${where.conditions.length ? `WHERE ${where.conditions.join(' AND ')}` : ''}`,
      { type: QueryTypes.SELECT, replacements: where.replacements },
    ),
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
  return { rows: rows.map(presentRow), total, ...(nextCursor ? { nextCursor } : {}) };
}

/** Every row the filter matches, in its sort order, read in keyset batches and handed on as CSV text. */
export async function exportFleet(
  deps: FleetDeps,
  actor: Actor,
  query: LoggersQuery,
  write: (chunk: string) => Promise<void>,
  batchSize = 1000,
): Promise<number> {
  const now = deps.now();
  const where = await whereOf(deps, actor, query, now);
  await write(csvRecord([...FLEET_CSV_HEADER]));
  let after: Cursor | undefined;
  let count = 0;
  for (;;) {
    const records = await readRows(deps, where, query, { limit: batchSize, offset: 0, after });
    if (records.length === 0) break;
    await write(records.map((r) => csvOf(presentRow(r))).join(''));
    count += records.length;
    if (records.length < batchSize) break;
    const last = records[records.length - 1];
    after = { sort: query.sort, dir: query.dir, value: last.sort_value, id: last.id };
  }
  return count;
}
