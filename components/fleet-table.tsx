// The fleet table (issue 6 §1): @tanstack/react-table v9 in manual mode — the server sorts, filters and
// pages; the table holds the sort, the page and the visible columns, all mirrored in the URL by the
// screen. Wide screens get the full table; phones get cards with serial, site, firmware and the worst flag.
import React from 'react';
import { Pressable, ScrollView, StyleSheet, Text, View } from 'react-native';
import {
  columnVisibilityFeature,
  createColumnHelper,
  rowPaginationFeature,
  rowSortingFeature,
  tableFeatures,
  useTable,
  type ColumnVisibilityState,
  type PaginationState,
  type SortingState,
  type Updater,
} from '@tanstack/react-table';
import { Badge, Card, Mono, Row, Skeleton } from './ui';
import { FlagBadges, SeenAt, UpdateStateBadge } from './fleet-controls';
import { absoluteTime, relativeTime } from './format';
import { colors, fonts, space, touchTarget, type } from './theme';
import type { FleetSortKey } from '../schemas/fleet';
import { FLAG_WORDS } from './words';
import type { FleetRow } from '../hooks/fleet';

const features = tableFeatures({ rowSortingFeature, rowPaginationFeature, columnVisibilityFeature });
const column = createColumnHelper<typeof features, FleetRow>();

const volts = (v: number | null) => (v === null ? '—' : `${v.toFixed(2)} V`);

/** Column ids are the server's sort keys, so a header press is the sort request as it is. */
export const fleetColumns = column.columns([
  column.accessor('serial', {
    id: 'serial',
    header: 'Serial',
    cell: (c) => <Mono style={{ fontSize: 13 }}>{c.row.original.serial}</Mono>,
  }),
  column.accessor((r) => r.siteName, { id: 'site', header: 'Site', cell: (c) => <Text style={type.dense}>{c.row.original.siteName ?? '—'}</Text> }),
  column.accessor((r) => r.customer, { id: 'customer', header: 'Customer', cell: (c) => <Text style={type.dense}>{c.row.original.customer ?? '—'}</Text> }),
  column.accessor((r) => r.modelName, { id: 'model', header: 'Model', cell: (c) => <Text style={type.dense}>{c.row.original.modelName}</Text> }),
  column.accessor('board', { id: 'board', header: 'Board', cell: (c) => <Text style={type.dense}>{c.row.original.board}</Text> }),
  column.accessor('channel', { id: 'channel', header: 'Channel', cell: (c) => <Text style={type.dense}>{c.row.original.channel}</Text> }),
  column.accessor('firmware', { id: 'firmware', header: 'Firmware', cell: (c) => <Mono style={{ fontSize: 13 }}>{c.row.original.firmware ?? '—'}</Mono> }),
  column.accessor('updateState', { id: 'updateState', header: 'Update', cell: (c) => <UpdateStateBadge state={c.row.original.updateState} /> }),
  column.accessor('lastSeenAt', {
    id: 'lastSeen',
    header: 'Last seen',
    cell: (c) => {
      const at = c.row.original.lastSeenAt;
      return <SeenAt at={at} relative={at ? relativeTime(at) : 'never'} absolute={at ? absoluteTime(at) : 'never'} />;
    },
  }),
  column.accessor('supplyV', { id: 'supplyV', header: 'Supply', cell: (c) => <Text style={[type.dense, { fontVariant: ['tabular-nums'] }]}>{volts(c.row.original.supplyV)}</Text> }),
  column.accessor('resets24h', { id: 'resets24h', header: 'Resets 24 h', cell: (c) => <Text style={[type.dense, { fontVariant: ['tabular-nums'] }]}>{c.row.original.resets24h}</Text> }),
  column.display({ id: 'flags', header: 'Flags', enableSorting: false, cell: (c) => <FlagBadges flags={c.row.original.flags} /> }),
]);

/** Every column a person may hide, with its header (serial always stays). */
export const choosableColumns: { id: string; label: string }[] = [
  { id: 'site', label: 'Site' },
  { id: 'customer', label: 'Customer' },
  { id: 'model', label: 'Model' },
  { id: 'board', label: 'Board' },
  { id: 'channel', label: 'Channel' },
  { id: 'firmware', label: 'Firmware' },
  { id: 'updateState', label: 'Update' },
  { id: 'lastSeen', label: 'Last seen' },
  { id: 'supplyV', label: 'Supply' },
  { id: 'resets24h', label: 'Resets 24 h' },
  { id: 'flags', label: 'Flags' },
];

const widths: Record<string, number> = {
  serial: 1.25,
  site: 1.6,
  customer: 1.5,
  model: 1,
  board: 0.55,
  channel: 0.65,
  firmware: 1,
  updateState: 1.1,
  lastSeen: 1.05,
  supplyV: 0.8,
  resets24h: 0.75,
  flags: 1.3,
};

type TableProps = {
  rows: FleetRow[];
  total: number;
  sort: FleetSortKey;
  dir: 'asc' | 'desc';
  page: number;
  pageSize: number;
  hidden: string[];
  onSort: (sort: FleetSortKey, dir: 'asc' | 'desc') => void;
  onOpen: (id: string) => void;
  busy?: boolean;
};

const apply = <T,>(u: Updater<T>, old: T): T => (typeof u === 'function' ? (u as (o: T) => T)(old) : u);

export function FleetTable({ rows, total, sort, dir, page, pageSize, hidden, onSort, onOpen, busy }: TableProps) {
  const sorting: SortingState = [{ id: sort, desc: dir === 'desc' }];
  const pagination: PaginationState = { pageIndex: page - 1, pageSize };
  const columnVisibility: ColumnVisibilityState = Object.fromEntries(hidden.map((id) => [id, false]));
  const table = useTable({
    features,
    columns: fleetColumns,
    data: rows,
    getRowId: (r) => r.id,
    manualSorting: true,
    manualPagination: true,
    enableSortingRemoval: false,
    rowCount: total,
    state: { sorting, pagination, columnVisibility },
    onSortingChange: (u) => {
      const next = apply(u, sorting)[0];
      if (next) onSort(next.id as FleetSortKey, next.desc ? 'desc' : 'asc');
    },
  });

  return (
    <Card style={{ padding: 0, gap: 0, opacity: busy ? 0.7 : 1 }}>
      <ScrollView horizontal contentContainerStyle={{ flexGrow: 1 }}>
        <View role="table" aria-label="Fleet" style={{ minWidth: 960, flexGrow: 1 }}>
          {table.getHeaderGroups().map((g) => (
            <View role="row" key={g.id} style={[styles.tr, styles.thead]}>
              {g.headers.map((h) => {
                const sorted = h.column.getIsSorted();
                const canSort = h.column.getCanSort();
                const label = String(h.column.columnDef.header ?? h.id);
                return (
                  <Pressable
                    key={h.id}
                    role="columnheader"
                    aria-sort={sorted === 'asc' ? 'ascending' : sorted === 'desc' ? 'descending' : 'none'}
                    aria-label={canSort ? `Sort by ${label}` : label}
                    disabled={!canSort}
                    onPress={h.column.getToggleSortingHandler()}
                    style={{ flex: widths[h.id] ?? 1, minHeight: touchTarget, justifyContent: 'center' }}
                  >
                    <Text style={[type.label, sorted && { color: colors.ink, fontFamily: fonts.semibold }]}>
                      <table.FlexRender header={h} />
                      {sorted === 'asc' ? ' ▲' : sorted === 'desc' ? ' ▼' : ''}
                    </Text>
                  </Pressable>
                );
              })}
            </View>
          ))}
          {table.getRowModel().rows.map((r) => (
            <Pressable
              role="row"
              key={r.id}
              onPress={() => onOpen(r.original.id)}
              aria-label={`Logger ${r.original.serial}`}
              testID="fleet-row"
              style={(s) => [styles.tr, (s as { hovered?: boolean }).hovered && { backgroundColor: colors.paper }]}
            >
              {r.getVisibleCells().map((c) => (
                <View role="cell" key={c.id} style={{ flex: widths[c.column.id] ?? 1 }}>
                  <table.FlexRender cell={c} />
                </View>
              ))}
            </Pressable>
          ))}
        </View>
      </ScrollView>
    </Card>
  );
}

export function FleetCard({ row, onOpen }: { row: FleetRow; onOpen: (id: string) => void }) {
  return (
    <Pressable role="link" aria-label={`Logger ${row.serial}`} onPress={() => onOpen(row.id)} testID="fleet-card">
      <Card style={{ gap: space.xs }}>
        <Row style={{ justifyContent: 'space-between' }}>
          <Mono style={{ fontFamily: fonts.monoMedium, fontSize: 16 }}>{row.serial}</Mono>
          {row.worstFlag ? <Badge label={FLAG_WORDS[row.worstFlag].label} tone={FLAG_WORDS[row.worstFlag].tone} /> : <Badge label="No flags" tone="moss" />}
        </Row>
        <Text style={type.body}>{row.siteName ?? 'Not installed yet'}</Text>
        <Text style={type.small}>
          firmware <Text style={{ fontFamily: fonts.mono }}>{row.firmware ?? '—'}</Text>
          {row.customer ? ` · ${row.customer}` : ''}
        </Text>
      </Card>
    </Pressable>
  );
}

/** Skeleton rows shaped like the table (wide) or the cards (phone) while the first page loads. */
export function FleetSkeleton({ wide, rows = 8 }: { wide: boolean; rows?: number }) {
  if (!wide) return <Skeleton rows={5} height={88} />;
  return (
    <Card style={{ gap: space.sm }}>
      <Skeleton rows={1} height={28} />
      {Array.from({ length: rows }, (_, i) => (
        <View key={i} style={{ height: 32, backgroundColor: colors.paperDeep, borderRadius: 4, opacity: 1 - i * 0.08 }} />
      ))}
    </Card>
  );
}

const styles = StyleSheet.create({
  tr: { flexDirection: 'row', alignItems: 'center', gap: space.xs, paddingHorizontal: space.sm, minHeight: touchTarget, paddingVertical: space.xs, borderBottomColor: colors.line, borderBottomWidth: 1 },
  thead: { backgroundColor: colors.paperDeep },
});
