// The fleet table: @tanstack/react-table v9 in manual mode — the server sorts, filters and
// pages; the table holds the sort, the page and the visible columns, all mirrored in the URL by the
// screen. Wide screens get the full table; phones get cards with serial, site, firmware and the worst flag.
import React from 'react';
import { Pressable, ScrollView, StyleSheet, Text, View } from 'react-native';
import { dataAttributes } from './web';
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
import { fleetColumnIds, fleetColumns, type FleetColumnId, type FleetSortKey } from '../schemas/fleet';
import { FLAG_WORDS } from './words';
import type { FleetRow } from '../hooks/fleet';

const features = tableFeatures({ rowSortingFeature, rowPaginationFeature, columnVisibilityFeature });
const column = createColumnHelper<typeof features, FleetRow>();

const volts = (v: number | null) => (v === null ? '—' : `${v.toFixed(2)} V`);
const dense = (value: string | null) => <Text style={type.dense}>{value ?? '—'}</Text>;
const figures = (value: string | number) => <Text style={[type.dense, { fontVariant: ['tabular-nums'] }]}>{value}</Text>;

type ColumnLook = {
  label: string;
  /** Share of the row's width (flex). */
  width: number;
  /** Whether a person may hide it in the column chooser. */
  hideable: boolean;
  /** A first press on the header sorts highest first (figures); otherwise A to Z, oldest first. */
  descFirst?: boolean;
  cell: (row: FleetRow) => React.ReactNode;
};

/**
 * The console's half of each fleet column (the shared half is schemas/fleet.ts `fleetColumns`, in whose
 * order they appear): label, width, whether it may be hidden, and its cell. null: in the CSV export only.
 */
const looks: Record<FleetColumnId, ColumnLook | null> = {
  serial: { label: 'Serial', width: 1.25, hideable: false, cell: (r) => <Mono style={{ fontSize: 13 }}>{r.serial}</Mono> },
  site: { label: 'Site', width: 1.6, hideable: true, cell: (r) => dense(r.siteName) },
  customer: { label: 'Customer', width: 1.5, hideable: true, cell: (r) => dense(r.customer) },
  model: { label: 'Model', width: 1, hideable: true, cell: (r) => dense(r.modelName) },
  board: { label: 'Board', width: 0.55, hideable: true, cell: (r) => dense(r.board) },
  channel: { label: 'Channel', width: 0.65, hideable: true, cell: (r) => dense(r.channel) },
  status: null,
  firmware: { label: 'Firmware', width: 1, hideable: true, cell: (r) => <Mono style={{ fontSize: 13 }}>{r.firmware ?? '—'}</Mono> },
  updateState: { label: 'Update', width: 1.1, hideable: true, cell: (r) => <UpdateStateBadge state={r.updateState} /> },
  lastSeen: {
    label: 'Last seen',
    width: 1.05,
    hideable: true,
    cell: (r) => <SeenAt at={r.lastSeenAt} relative={r.lastSeenAt ? relativeTime(r.lastSeenAt) : 'never'} absolute={r.lastSeenAt ? absoluteTime(r.lastSeenAt) : 'never'} />,
  },
  supplyV: { label: 'Supply', width: 0.8, hideable: true, descFirst: true, cell: (r) => figures(volts(r.supplyV)) },
  tempC: null,
  resets24h: { label: 'Resets 24 h', width: 0.75, hideable: true, descFirst: true, cell: (r) => figures(r.resets24h) },
  flags: { label: 'Flags', width: 1.3, hideable: true, cell: (r) => <FlagBadges flags={r.flags} /> },
};

const shown = fleetColumnIds.flatMap((id) => {
  const look = looks[id];
  return look ? [{ id, ...look }] : [];
});

/** The table's columns. Their ids are the server's sort keys, so a header press is the sort request as it is. */
export const tableColumns = column.columns(
  shown.map((c) =>
    // Sorting happens in the server (manual mode); the accessor only marks the column as data, which sorting needs.
    column.accessor((r) => r, {
      id: c.id,
      header: c.label,
      enableSorting: fleetColumns[c.id].sortable,
      sortDescFirst: c.descFirst ?? false,
      cell: (x) => c.cell(x.row.original),
    }),
  ),
);

/** Every column a person may hide, with its label (serial always stays). */
export const choosableColumns: { id: FleetColumnId; label: string }[] = shown.filter((c) => c.hideable).map(({ id, label }) => ({ id, label }));

const widths = Object.fromEntries(shown.map((c) => [c.id, c.width])) as Record<string, number>;

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
    columns: tableColumns,
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
              {...dataAttributes({ serial: r.original.serial })}
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
    <Pressable role="link" {...dataAttributes({ serial: row.serial })} onPress={() => onOpen(row.id)} testID="fleet-card">
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
