// The registry list: cards on phones, a simple table on wide screens; search, status filter, pages.
import React from 'react';
import { Pressable, StyleSheet, Text, View } from 'react-native';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Field, Mono, Row, Skeleton } from './ui';
import { Choices } from './choice';
import { QueryView, type QueryState } from './query-state';
import { loggerStatus, withOnline } from './status';
import { absoluteTime, relativeTime } from './format';
import { colors, fonts, space, touchTarget, type } from './theme';
import type { List } from '../schemas/common';
import type { LoggerFilter, LoggerRow, LoggerStatus } from '../hooks/loggers';

type Props = {
  state: QueryState<List<LoggerRow>> & { isFetching?: boolean };
  filter: LoggerFilter;
  onFilter: (next: LoggerFilter) => void;
  wide: boolean;
  canRegister: boolean;
  onRegister: () => void;
  onOpen: (id: string) => void;
  /** Check-in interval of each model, by id: a row is online when seen within three of them. */
  intervals: Record<string, number>;
};

const statusChoices: { value: LoggerStatus | 'all'; label: string }[] = [
  { value: 'all', label: 'All' },
  { value: 'registered', label: 'Registered' },
  { value: 'enrolled', label: 'Enrolled' },
  { value: 'retired', label: 'Retired' },
];

export function LoggersScreen({ state, filter, onFilter, wide, canRegister, onRegister, onOpen, intervals }: Props) {
  const [q, setQ] = React.useState(filter.q ?? '');
  // Search as the person types, a moment after the last key.
  React.useEffect(() => {
    const t = setTimeout(() => {
      if ((filter.q ?? '') !== q.trim()) onFilter({ ...filter, q: q.trim() || undefined, page: 1 });
    }, 300);
    return () => clearTimeout(t);
  }, [q]); // eslint-disable-line react-hooks/exhaustive-deps

  const total = state.data?.total;
  return (
    <Page
      title="Loggers"
      subtitle={total === undefined ? 'The registry' : `${total} ${total === 1 ? 'logger' : 'loggers'}${filter.q || filter.status ? ' match' : ' in the registry'}`}
      actions={canRegister ? <Button label="Register loggers" onPress={onRegister} testID="register-loggers" /> : undefined}
    >
      <View style={{ gap: space.sm }}>
        <Field label="Search" value={q} onChangeText={setQ} placeholder="Serial, site or customer" autoCapitalize="none" testID="logger-search" />
        <Choices
          choices={statusChoices}
          value={filter.status ?? 'all'}
          onChange={(v) => onFilter({ ...filter, status: v === 'all' ? undefined : v, page: 1 })}
        />
      </View>
      <QueryView state={state} rows={6}>
        {(data) => {
          if (!data.rows.length) {
            return filter.q || filter.status ? (
              <EmptyState title="No loggers match" detail="Try another search or status." />
            ) : (
              <EmptyState
                title="No loggers yet"
                detail={canRegister ? 'Register loggers one at a time or upload a CSV batch; each gets a QR label for enrollment.' : 'Loggers appear here once an admin or integrator registers them.'}
                action={canRegister ? <Button label="Register loggers" onPress={onRegister} /> : undefined}
              />
            );
          }
          return (
            <View style={{ gap: space.md, opacity: state.isFetching ? 0.7 : 1 }}>
              {wide ? <LoggerTable rows={data.rows.map((r) => withOnline(r, intervals))} onOpen={onOpen} /> : data.rows.map((r) => <LoggerCard key={r.id} row={withOnline(r, intervals)} onOpen={onOpen} />)}
              <Pager total={data.total} filter={filter} onFilter={onFilter} wide={wide} />
            </View>
          );
        }}
      </QueryView>
    </Page>
  );
}

function LoggerCard({ row, onOpen }: { row: LoggerRow; onOpen: (id: string) => void }) {
  const s = loggerStatus(row);
  return (
    <Pressable role="link" aria-label={`Logger ${row.serial}`} onPress={() => onOpen(row.id)} testID="logger-card">
      <Card style={{ gap: space.xs }}>
        <Row style={{ justifyContent: 'space-between' }}>
          <Mono style={{ fontFamily: fonts.monoMedium, fontSize: 16 }}>{row.serial}</Mono>
          <Badge label={s.label} tone={s.tone} />
        </Row>
        <Text style={type.body}>{row.siteName ?? 'Not installed yet'}</Text>
        <Text style={type.small}>
          {row.modelName} · board {row.board} · firmware {row.firmware ?? '—'}
          {row.lastSeenAt ? ` · seen ${relativeTime(row.lastSeenAt)}` : ''}
        </Text>
      </Card>
    </Pressable>
  );
}

const columns = [
  { key: 'serial', label: 'Serial', flex: 1.3 },
  { key: 'model', label: 'Model · board', flex: 1.6 },
  { key: 'site', label: 'Site', flex: 2 },
  { key: 'status', label: 'Status', flex: 1 },
  { key: 'firmware', label: 'Firmware', flex: 0.9 },
  { key: 'seen', label: 'Last check-in', flex: 1.1 },
] as const;

function LoggerTable({ rows, onOpen }: { rows: LoggerRow[]; onOpen: (id: string) => void }) {
  return (
    <Card style={{ padding: 0, gap: 0 }}>
      <View role="table" aria-label="Loggers">
        <View role="row" style={[styles.tr, styles.thead]}>
          {columns.map((c) => (
            <Text role="columnheader" key={c.key} style={[type.label, { flex: c.flex }]}>
              {c.label}
            </Text>
          ))}
        </View>
        {rows.map((r) => {
          const s = loggerStatus(r);
          return (
            <Pressable role="row" key={r.id} onPress={() => onOpen(r.id)} aria-label={`Logger ${r.serial}`} style={(state) => [styles.tr, (state as { hovered?: boolean }).hovered && { backgroundColor: colors.paper }]}>
              <Text role="cell" style={[type.mono, { flex: 1.3 }]}>
                {r.serial}
              </Text>
              <Text role="cell" style={[type.dense, { flex: 1.6 }]}>
                {r.modelName} · {r.board}
              </Text>
              <Text role="cell" style={[type.dense, { flex: 2 }]} numberOfLines={2}>
                {r.siteName ?? '—'}
                {r.customer ? <Text style={type.small}>{`\n${r.customer}`}</Text> : null}
              </Text>
              <View role="cell" style={{ flex: 1 }}>
                <Badge label={s.label} tone={s.tone} />
              </View>
              <Text role="cell" style={[type.mono, { flex: 0.9, fontSize: 13 }]}>
                {r.firmware ?? '—'}
              </Text>
              <Text role="cell" style={[type.dense, { flex: 1.1, fontVariant: ['tabular-nums'] }]} aria-label={r.lastSeenAt ? absoluteTime(r.lastSeenAt) : 'never'}>
                {r.lastSeenAt ? relativeTime(r.lastSeenAt) : 'never'}
              </Text>
            </Pressable>
          );
        })}
      </View>
    </Card>
  );
}

function Pager({ total, filter, onFilter, wide }: { total: number; filter: LoggerFilter; onFilter: (f: LoggerFilter) => void; wide: boolean }) {
  const size = filter.pageSize ?? 25;
  const page = filter.page ?? 1;
  const pages = Math.max(1, Math.ceil(total / size));
  const from = total === 0 ? 0 : (page - 1) * size + 1;
  const to = Math.min(total, page * size);
  return (
    <Row wrap gap={space.sm} style={{ justifyContent: 'space-between' }}>
      <Text style={[type.small, { fontVariant: ['tabular-nums'] }]}>
        {from}–{to} of {total}
      </Text>
      <Row gap={space.sm}>
        {wide ? (
          <Choices
            choices={[25, 50, 100].map((n) => ({ value: n, label: `${n}` }))}
            value={size}
            onChange={(n) => onFilter({ ...filter, pageSize: n as 25 | 50 | 100, page: 1 })}
          />
        ) : null}
        <Button label="Previous" variant="secondary" disabled={page <= 1} onPress={() => onFilter({ ...filter, page: page - 1 })} />
        <Text style={type.small}>
          {page} / {pages}
        </Text>
        <Button label="Next" variant="secondary" disabled={page >= pages} onPress={() => onFilter({ ...filter, page: page + 1 })} />
      </Row>
    </Row>
  );
}

export function LoggerListSkeleton() {
  return <Skeleton rows={6} height={touchTarget} />;
}

const styles = StyleSheet.create({
  tr: { flexDirection: 'row', alignItems: 'center', gap: space.md, paddingHorizontal: space.lg, minHeight: touchTarget, paddingVertical: space.sm, borderBottomColor: colors.line, borderBottomWidth: 1 },
  thead: { backgroundColor: colors.paperDeep, minHeight: 36 },
});
