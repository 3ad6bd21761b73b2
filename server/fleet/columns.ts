// The server's half of each fleet table column (the shared half — ids, row fields, which sort — is
// schemas/fleet.ts `fleetColumns`): what it selects, how it sorts and pages by keyset, how the answer
// presents it, and its CSV cell. The SELECT list, the sort allow-list's SQL, the row presenter and the CSV
// header and records all derive from this table. Every SQL text here is a constant; values are bound.
import { fleetColumnIds, fleetSortKeys, type FleetColumnFields, type FleetColumnId, type FleetRow, type FleetSortKey } from '../../schemas/fleet';
import { FLEET_FLAGS } from '../../schemas/words';
import { csvRecord, safeText } from './csv';
import { FLAG_SQL, RESETS_24H, TEMP_C } from './sql';

/** A row as PostgreSQL answers it (uuid and text as strings, numeric as text, timestamptz as a Date). */
type Record_ = Record<string, unknown>;

/** The SQL types a keyset cursor value is read back as (table.ts checks the value's form for each). */
export type SortType = 'text' | 'text[]' | 'integer' | 'numeric' | 'timestamptz';

type ServerColumn<K extends FleetColumnId> = {
  /** Output name → SQL expression over the logger `l`, its model `m` and its site `s` (sql.ts FLEET_PAGE_JOINS). */
  select: Record<string, string>;
  /** The column's row fields from the selected values. */
  present: (r: Record_) => FleetColumnFields<K>;
  /** The CSV header cell and the cell of a presented row; free text through safeText. */
  csv: { name: string; value: (row: FleetRow) => string | number | null };
} & (K extends FleetSortKey
  ? /** The sort expression over `l` alone (never null, so keyset comparisons hold; indexed with the id) and the type its cursor value is read back as. */
    { sort: { expr: string; type: SortType } }
  : { sort?: never });

const text = (v: unknown) => v as string;
const textOrNull = (v: unknown) => (v === null ? null : (v as string));
const numberOrNull = (v: unknown) => (v === null ? null : Number(v));

export const FLEET_COLUMNS: { [K in FleetColumnId]: ServerColumn<K> } = {
  serial: {
    select: { serial: 'l.serial' },
    present: (r) => ({ serial: text(r.serial) }),
    sort: { expr: 'lower(l.serial)', type: 'text' },
    csv: { name: 'serial', value: (row) => safeText(row.serial) },
  },
  site: {
    select: { site_id: 'l.site_id', site_name: 's.name' },
    present: (r) => ({ siteId: textOrNull(r.site_id), siteName: textOrNull(r.site_name) }),
    // Sort keys on the logger row (migration 0013): a key of the logger alone, with an index on (key, id).
    sort: { expr: 'l.site_sort', type: 'text' },
    csv: { name: 'site', value: (row) => safeText(row.siteName) },
  },
  customer: {
    select: { customer: 's.customer' },
    present: (r) => ({ customer: textOrNull(r.customer) }),
    sort: { expr: 'l.customer_sort', type: 'text' },
    csv: { name: 'customer', value: (row) => safeText(row.customer) },
  },
  model: {
    select: { model_id: 'l.model_id', model_name: 'm.name' },
    present: (r) => ({ modelId: text(r.model_id), modelName: text(r.model_name) }),
    sort: { expr: 'l.model_sort', type: 'text' },
    csv: { name: 'model', value: (row) => safeText(row.modelName) },
  },
  board: {
    select: { board: 'l.board' },
    present: (r) => ({ board: text(r.board) }),
    sort: { expr: 'l.board', type: 'text' },
    csv: { name: 'board', value: (row) => safeText(row.board) },
  },
  channel: {
    select: { channel: 'l.channel' },
    present: (r) => ({ channel: r.channel as FleetRow['channel'] }),
    sort: { expr: 'l.channel', type: 'text' },
    csv: { name: 'channel', value: (row) => row.channel },
  },
  status: {
    select: { status: 'l.status' },
    present: (r) => ({ status: r.status as FleetRow['status'] }),
    csv: { name: 'status', value: (row) => row.status },
  },
  firmware: {
    select: { firmware: 'l.firmware' },
    present: (r) => ({ firmware: textOrNull(r.firmware) }),
    // The running version's semantic-version precedence (semver.org §11), a generated column (migration 0006).
    sort: { expr: 'l.firmware_key', type: 'text[]' },
    csv: { name: 'firmware', value: (row) => safeText(row.firmware) },
  },
  updateState: {
    // Kept against the current release of the logger's model and channel (migration 0013).
    select: { update_state: 'l.update_state' },
    present: (r) => ({ updateState: r.update_state as FleetRow['updateState'] }),
    // Pipeline order: behind, failed, offered … installed, up to date (heliodor_update_rank).
    sort: { expr: 'l.update_rank', type: 'integer' },
    csv: { name: 'update_state', value: (row) => row.updateState },
  },
  lastSeen: {
    select: { last_seen_at: 'l.last_seen_at' },
    present: (r) => ({ lastSeenAt: r.last_seen_at ? new Date(r.last_seen_at as Date).toISOString() : null }),
    sort: { expr: "COALESCE(l.last_seen_at, '-infinity'::timestamptz)", type: 'timestamptz' },
    csv: { name: 'last_seen_at', value: (row) => row.lastSeenAt },
  },
  supplyV: {
    select: { supply_v: 'l.supply_v' },
    present: (r) => ({ supplyV: numberOrNull(r.supply_v) }),
    sort: { expr: 'COALESCE(l.supply_v, -1)', type: 'numeric' },
    csv: { name: 'supply_v', value: (row) => row.supplyV },
  },
  tempC: {
    select: { temp_c: TEMP_C },
    present: (r) => ({ tempC: numberOrNull(r.temp_c) }),
    csv: { name: 'temp_c', value: (row) => row.tempC },
  },
  resets24h: {
    select: { resets_24h: RESETS_24H },
    present: (r) => ({ resets24h: Number(r.resets_24h) }),
    // The length of recent_resets, exact at the clock once the table has trimmed the window (sql.ts TRIM_RESETS).
    sort: { expr: 'l.resets_24h', type: 'integer' },
    csv: { name: 'resets_24h', value: (row) => row.resets24h },
  },
  flags: {
    select: Object.fromEntries(FLEET_FLAGS.map((f) => [`f_${f}`, FLAG_SQL[f]])),
    present: (r) => {
      const flags = FLEET_FLAGS.filter((f) => r[`f_${f}`]);
      return { flags, worstFlag: flags[0] ?? null };
    },
    csv: { name: 'flags', value: (row) => row.flags.join(' ') },
  },
};

/** Each sort key's expression and cursor type, from the sortable columns. */
export const SORTS = Object.fromEntries(fleetSortKeys.map((key) => [key, FLEET_COLUMNS[key].sort])) as Record<FleetSortKey, { expr: string; type: SortType }>;

/** The SELECT list of every column (the id and the sort value are added by the query). */
export const FLEET_SELECT = fleetColumnIds.flatMap((id) => Object.entries(FLEET_COLUMNS[id].select).map(([name, expr]) => `${expr} AS ${name}`)).join(',\n            ');

/** A row of the answer from what the query selected. */
export function presentRow(r: Record_): FleetRow {
  return Object.assign({ id: text(r.id) }, ...fleetColumnIds.map((id) => FLEET_COLUMNS[id].present(r))) as FleetRow;
}

export const FLEET_CSV_HEADER = fleetColumnIds.map((id) => FLEET_COLUMNS[id].csv.name);

/** One CSV record (RFC 4180, CRLF-terminated) of a presented row. */
export function csvOf(row: FleetRow): string {
  return csvRecord(fleetColumnIds.map((id) => FLEET_COLUMNS[id].csv.value(row)));
}
