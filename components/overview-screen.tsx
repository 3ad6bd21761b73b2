import React from 'react';
import { Pressable, StyleSheet, Text, View } from 'react-native';
import { dataAttributes } from './web';
import { Link } from 'expo-router';
import { Page } from './shell';
import { Badge, Card, EmptyState, ProgressBar, Row } from './ui';
import { FLAG_WORDS, NOT_HEARD_FROM, RELEASE_STATE_WORDS } from './words';
import { QueryView, type QueryState } from './query-state';
import { useBreakpoints } from './breakpoints';
import { colors, linkTarget, space, type, toneColors, type Tone } from './theme';
import type { Overview } from '../schemas/overview';
import { relativeTime, summaryAge } from './format';

export function OverviewScreen({ name, state }: { name: string; state: QueryState<Overview> }) {
  const { wide } = useBreakpoints();
  return (
    <Page title="Overview" subtitle={name ? `Signed in as ${name}` : undefined}>
      <QueryView state={state}>
        {(o) =>
          o.loggers.total === 0 ? (
            <Card>
              <EmptyState title="No loggers yet" detail="Register loggers (one at a time or a batch from a CSV) to see the fleet here." />
            </Card>
          ) : (
            <View style={{ gap: space.lg }}>
              <View style={[styles.grid, wide && { flexWrap: 'nowrap' }]}>
                <Figure label="Loggers" value={o.loggers.total} note={`${o.loggers.registered} waiting to be enrolled`} href="/loggers" />
                <Figure label="Online" value={o.loggers.online} tone="moss" note="checked in within 3 intervals" href="/loggers?status=enrolled" />
                <Figure label={NOT_HEARD_FROM.label} value={o.fleet?.silent.count ?? o.loggers.silent} tone={o.loggers.silent ? NOT_HEARD_FROM.tone : 'moss'} note="enrolled, no recent check-in" href={o.fleet?.silent.href ?? '/loggers?flag=silent'} />
                <Figure label="Sites" value={o.sites} note={`${o.models} model${o.models === 1 ? '' : 's'}, ${o.people} people`} href="/sites" />
              </View>
              {o.fleet ? <FleetHealth fleet={o.fleet} registered={o.loggers.registered} retired={o.loggers.retired} /> : null}
              {o.recentActivity ? <RecentActivity rows={o.recentActivity} /> : null}
            </View>
          )
        }
      </QueryView>
    </Page>
  );
}

function Figure({ label, value, note, tone = 'ink', href }: { label: string; value: number; note: string; tone?: Tone; href?: string }) {
  const card = (
    <Card style={styles.figure} testID={`figure-${label.toLowerCase()}`}>
      <Text style={type.label}>{label}</Text>
      <Text style={[type.figure, { color: toneColors[tone].text }]} testID={`figure-${label.toLowerCase()}-value`}>
        {value.toLocaleString('en-GB')}
      </Text>
      <Text style={type.small}>{note}</Text>
    </Card>
  );
  if (!href) return card;
  return (
    <Link href={href as never} asChild>
      <Pressable role="link" style={styles.figureLink}>
        {card}
      </Pressable>
    </Link>
  );
}

/** Fleet health: flags, lagging sites and live releases, each a link into its filtered view. */
function FleetHealth({ fleet, registered, retired }: { fleet: Overview['fleet']; registered: number; retired: number }) {
  return (
    <View style={{ gap: space.md }}>
      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Fleet health
        </Text>
        <Row wrap gap={space.sm}>
          {fleet.flags.map((f) => (
            <Link key={f.flag} href={f.href as never} asChild>
              <Pressable role="link" style={styles.chip} testID={`overview-flag-${f.flag}`}>
                <Badge label={`${FLAG_WORDS[f.flag].label} · ${f.count}`} tone={f.count ? FLAG_WORDS[f.flag].tone : 'moss'} />
              </Pressable>
            </Link>
          ))}
          <Link href={fleet.laggingSites.href as never} asChild>
            <Pressable role="link" style={styles.chip} testID="overview-lagging">
              <Badge
                label={`Lagging sites · ${fleet.laggingSites.count}${summaryAge(fleet.laggingSites.ageS) ? ` (${summaryAge(fleet.laggingSites.ageS)})` : ''}`}
                tone={fleet.laggingSites.count ? 'amber' : 'moss'}
              />
            </Pressable>
          </Link>
          <Link href={'/loggers?status=registered' as never} asChild>
            <Pressable role="link" style={styles.chip}>
              <Badge label={`Registered · ${registered}`} tone="slate" />
            </Pressable>
          </Link>
          <Link href={'/loggers?status=retired' as never} asChild>
            <Pressable role="link" style={styles.chip}>
              <Badge label={`Retired · ${retired}`} tone="ink" />
            </Pressable>
          </Link>
        </Row>
      </Card>
      <Card>
        <Text role="heading" aria-level={2} style={type.heading}>
          Live releases
        </Text>
        {fleet.liveReleases.length === 0 ? (
          <Text style={type.body}>No release is rolling out right now.</Text>
        ) : (
          fleet.liveReleases.map((r) => (
            <Link key={r.id} href={r.href as never} asChild>
              <Pressable role="link" style={styles.releaseRow} testID="live-release" {...dataAttributes({ release: `${r.version} ${r.channel}` })}>
                <View style={{ gap: space.xs, width: '100%' }}>
                  <Row wrap style={{ justifyContent: 'space-between' }}>
                    <Text style={type.body}>
                      {r.modelName} <Text style={type.mono}>{r.version}</Text> · {r.channel}
                    </Text>
                    <Badge label={`${RELEASE_STATE_WORDS[r.state].label} · ${r.share} %`} tone={RELEASE_STATE_WORDS[r.state].tone} />
                  </Row>
                  <ProgressBar value={r.share} name={`Release ${r.version} rollout share`} tone={r.state === 'stopped' ? 'ember' : 'moss'} />
                  <Text style={type.small}>
                    {r.installed} installed · {r.failed} failed
                  </Text>
                </View>
              </Pressable>
            </Link>
          ))
        )}
      </Card>
    </View>
  );
}

const styles = StyleSheet.create({
  grid: { flexDirection: 'row', flexWrap: 'wrap', gap: space.md },
  figure: { flexGrow: 1, flexBasis: 150, minWidth: 150 },
  figureLink: { flexGrow: 1, flexBasis: 150, minWidth: 150, textDecorationLine: 'none' },
  chip: { minHeight: 44, justifyContent: 'center', paddingVertical: space.sm, textDecorationLine: 'none' },
  releaseRow: { borderTopColor: colors.line, borderTopWidth: 1, paddingVertical: space.sm, textDecorationLine: 'none' },
  activityRow: { borderTopColor: colors.line, borderTopWidth: 1, paddingTop: space.sm, gap: 2 },
  link: { textDecorationLine: 'underline', color: colors.ink, ...linkTarget },
});

/** The latest entries of the activity log, for people who may read it (the overview answers null to others). */
function RecentActivity({ rows }: { rows: NonNullable<Overview['recentActivity']> }) {
  return (
    <Card>
      <Text role="heading" aria-level={2} style={type.heading}>
        Recent activity
      </Text>
      {rows.length === 0 ? (
        <Text style={type.body}>Nothing has happened yet.</Text>
      ) : (
        rows.map((a) => (
          <View key={a.id} style={styles.activityRow}>
            <Text style={[type.body, { flex: 1 }]}>{a.summary}</Text>
            <Text style={type.small}>
              {a.actorName} · {relativeTime(a.at)}
            </Text>
          </View>
        ))
      )}
      <Link href="/activity" style={[type.body, styles.link]}>
        All activity
      </Link>
    </Card>
  );
}
