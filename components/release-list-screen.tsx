// Releases: every release of every model, newest first, with its state and rollout share.
import React from 'react';
import { Pressable, ScrollView, StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { Page } from './shell';
import { Badge, Button, Card, EmptyState, Mono, Row } from './ui';
import { QueryView, type QueryState } from './query-state';
import { ShareBar, StateBadge, ChannelBadge, stateWords } from './release-badges';
import { colors, fonts, radii, space, touchTarget, type } from './theme';
import { absoluteTime, relativeTime } from './format';
import type { List } from '../schemas/common';
import type { ReleaseFilter, ReleaseRow, ReleaseState, Channel } from '../hooks/releases';

type Props = {
  state: QueryState<List<ReleaseRow>>;
  filter: ReleaseFilter;
  onFilterChange: (f: ReleaseFilter) => void;
  canCreate: boolean;
  onNew: () => void;
  wide: boolean;
};

const stateOptions: (ReleaseState | 'all')[] = ['all', 'draft', 'pilot', 'widening', 'complete', 'paused', 'stopped', 'withdrawn'];
const channelOptions: (Channel | 'all')[] = ['all', 'stable', 'early'];

export function ReleaseListScreen({ state, filter, onFilterChange, canCreate, onNew, wide }: Props) {
  const filtered = Boolean(filter.state || filter.channel);
  return (
    <Page
      title="Releases"
      subtitle="Signed images, who gets them, and how far each rollout has gone"
      actions={canCreate ? <Button label="New release" onPress={onNew} testID="new-release" /> : undefined}
    >
      <View style={{ gap: space.sm }}>
        <FilterChips
          label="State"
          value={filter.state ?? 'all'}
          options={stateOptions.map((s) => ({ value: s, label: s === 'all' ? 'All states' : stateWords[s] }))}
          onChange={(v) => onFilterChange({ ...filter, state: v === 'all' ? undefined : v })}
          scroll={!wide}
        />
        <FilterChips
          label="Channel"
          value={filter.channel ?? 'all'}
          options={channelOptions.map((t) => ({ value: t, label: t === 'all' ? 'All channels' : t === 'stable' ? 'Stable' : 'Early' }))}
          onChange={(v) => onFilterChange({ ...filter, channel: v === 'all' ? undefined : v })}
          scroll={!wide}
        />
      </View>
      <QueryView state={state} rows={5}>
        {(data) => {
          if (!data.rows.length) {
            return filtered ? (
              <EmptyState
                title="No releases match these filters"
                detail="Choose another state or channel, or show all releases."
                action={<Button label="Show all releases" variant="secondary" onPress={() => onFilterChange({})} />}
              />
            ) : (
              <EmptyState
                title="No releases yet"
                detail="No releases yet — upload a signed image to create a draft."
                action={canCreate ? <Button label="New release" onPress={onNew} /> : undefined}
              />
            );
          }
          return (
            <View style={{ gap: space.sm }}>
              <Text style={type.small}>
                {data.total} {data.total === 1 ? 'release' : 'releases'}
              </Text>
              {wide ? <ReleaseTable rows={data.rows} /> : data.rows.map((r) => <ReleaseCard key={r.id} r={r} />)}
            </View>
          );
        }}
      </QueryView>
    </Page>
  );
}

function FilterChips<T extends string>({ label, value, options, onChange, scroll }: { label: string; value: T; options: { value: T; label: string }[]; onChange: (v: T) => void; scroll?: boolean }) {
  // On phones the chips scroll sideways in one line instead of taking half the screen.
  const chips = options.map((o) => {
    const on = o.value === value;
    return (
      <Pressable key={o.value} role="radio" aria-checked={on} aria-label={`${label}: ${o.label}`} onPress={() => onChange(o.value)} style={[styles.filter, on && styles.filterOn]}>
        <Text style={[type.body, { fontSize: 14, color: on ? colors.onInk : colors.ink }, on && { fontFamily: fonts.semibold }]}>{o.label}</Text>
      </Pressable>
    );
  });
  if (scroll) {
    return (
      <ScrollView horizontal role="radiogroup" aria-label={label} showsHorizontalScrollIndicator={false} contentContainerStyle={{ gap: space.xs }}>
        {chips}
      </ScrollView>
    );
  }
  return (
    <View role="radiogroup" aria-label={label} style={styles.filters}>
      {chips}
    </View>
  );
}

function Counts({ r }: { r: ReleaseRow }) {
  return (
    <Text style={[type.small, { fontVariant: ['tabular-nums'] }]}>
      <Text style={{ color: colors.moss, fontFamily: fonts.semibold }}>{r.installed}</Text> installed ·{' '}
      <Text style={{ color: r.failed ? colors.ember : colors.inkSoft, fontFamily: r.failed ? fonts.semibold : fonts.regular }}>{r.failed}</Text> failed
    </Text>
  );
}

function ReleaseCard({ r }: { r: ReleaseRow }) {
  return (
    <Link href={`/releases/${r.id}` as never} asChild>
      <Pressable testID="release-card" style={styles.cardPress}>
        <Card>
          <Row style={{ justifyContent: 'space-between' }}>
            <Mono style={{ fontSize: 17, fontFamily: fonts.monoMedium }}>{r.version}</Mono>
            <StateBadge state={r.state} />
          </Row>
          <Row wrap>
            <Text style={type.body}>{r.modelName}</Text>
            <ChannelBadge channel={r.channel} />
            {r.flagged ? <Badge label="Revoked key" tone="ember" /> : null}
          </Row>
          <ShareBar state={r.state} share={r.share} />
          <Counts r={r} />
        </Card>
      </Pressable>
    </Link>
  );
}

function ReleaseTable({ rows }: { rows: ReleaseRow[] }) {
  return (
    <Card style={{ padding: 0, gap: 0 }} testID="release-table">
      <View role="table" aria-label="Releases">
        <View role="row" style={[styles.tr, styles.thead]}>
          {['Version', 'Model', 'Channel', 'State', 'Share', 'Installed', 'Failed', 'Uploaded'].map((h, i) => (
            <Text key={h} role="columnheader" style={[type.label, styles.cell, cols[i]]}>
              {h}
            </Text>
          ))}
        </View>
        {rows.map((r) => (
          <Link key={r.id} href={`/releases/${r.id}` as never} asChild>
            <Pressable role="row" aria-label={`Release ${r.version} of ${r.modelName}, ${stateWords[r.state]}`} style={styles.tr}>
              <View role="cell" style={[styles.cell, cols[0]]}>
                <Mono style={{ fontFamily: fonts.monoMedium }}>{r.version}</Mono>
                {r.flagged ? <Badge label="Revoked key" tone="ember" /> : null}
              </View>
              <Text role="cell" style={[type.dense, styles.cell, cols[1]]}>{r.modelName}</Text>
              <View role="cell" style={[styles.cell, cols[2]]}>
                <ChannelBadge channel={r.channel} />
              </View>
              <View role="cell" style={[styles.cell, cols[3]]}>
                <StateBadge state={r.state} />
              </View>
              <View role="cell" style={[styles.cell, cols[4]]}>
                <ShareBar state={r.state} share={r.share} compact />
              </View>
              <Text role="cell" style={[type.dense, styles.cell, cols[5], styles.num, { color: colors.mossInk }]}>{r.installed}</Text>
              <Text role="cell" style={[type.dense, styles.cell, cols[6], styles.num, r.failed ? { color: colors.emberInk, fontFamily: fonts.semibold } : null]}>{r.failed}</Text>
              <Text role="cell" aria-label={absoluteTime(r.createdAt)} style={[type.small, styles.cell, cols[7]]}>
                {relativeTime(r.createdAt)}
              </Text>
            </Pressable>
          </Link>
        ))}
      </View>
    </Card>
  );
}

const cols = [{ flex: 1.2 }, { flex: 1.6 }, { flex: 1.1 }, { flex: 1.1 }, { flex: 1.4 }, { flex: 0.8 }, { flex: 0.7 }, { flex: 1 }];

const styles = StyleSheet.create({
  filters: { flexDirection: 'row', flexWrap: 'wrap', gap: space.xs },
  filter: { minHeight: touchTarget, paddingHorizontal: space.md, borderRadius: radii.lg, borderWidth: 1, borderColor: colors.line, backgroundColor: colors.surface, justifyContent: 'center' },
  filterOn: { backgroundColor: colors.ink, borderColor: colors.ink },
  cardPress: { borderRadius: radii.md },
  tr: { flexDirection: 'row', alignItems: 'center', minHeight: touchTarget + 12, borderBottomColor: colors.line, borderBottomWidth: 1, paddingHorizontal: space.md },
  thead: { minHeight: touchTarget, backgroundColor: colors.paperDeep, borderTopLeftRadius: radii.md, borderTopRightRadius: radii.md },
  cell: { paddingHorizontal: space.xs, gap: 2 },
  num: { fontVariant: ['tabular-nums'], textAlign: 'right', paddingRight: space.md },
});
