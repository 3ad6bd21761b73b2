import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import { Link } from 'expo-router';
import { Page } from './shell';
import { Card, EmptyState } from './ui';
import { QueryView, type QueryState } from './query-state';
import { useBreakpoints } from './breakpoints';
import { colors, space, type, toneColors, type Tone } from './theme';
import type { Overview } from '../schemas/overview';
import { relativeTime } from './format';

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
                <Figure label="Loggers" value={o.loggers.total} note={`${o.loggers.registered} waiting to be enrolled`} />
                <Figure label="Online" value={o.loggers.online} tone="moss" note="checked in within 3 intervals" />
                <Figure label="Silent" value={o.loggers.silent} tone={o.loggers.silent ? 'amber' : 'moss'} note="enrolled, no recent check-in" />
                <Figure label="Sites" value={o.sites} note={`${o.models} model${o.models === 1 ? '' : 's'}, ${o.people} people`} />
              </View>
              <Card>
                <Text role="heading" aria-level={2} style={type.heading}>
                  Recent activity
                </Text>
                {o.recentActivity.length === 0 ? (
                  <Text style={type.body}>Nothing has happened yet.</Text>
                ) : (
                  o.recentActivity.map((a) => (
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
            </View>
          )
        }
      </QueryView>
    </Page>
  );
}

function Figure({ label, value, note, tone = 'ink' }: { label: string; value: number; note: string; tone?: Tone }) {
  return (
    <Card style={styles.figure} testID={`figure-${label.toLowerCase()}`}>
      <Text style={type.label}>{label}</Text>
      <Text style={[type.figure, { color: toneColors[tone].fg }]}>{value.toLocaleString('en-GB')}</Text>
      <Text style={type.small}>{note}</Text>
    </Card>
  );
}

const styles = StyleSheet.create({
  grid: { flexDirection: 'row', flexWrap: 'wrap', gap: space.md },
  figure: { flexGrow: 1, flexBasis: 150, minWidth: 150 },
  activityRow: { borderTopColor: colors.line, borderTopWidth: 1, paddingTop: space.sm, gap: 2 },
  link: { textDecorationLine: 'underline', color: colors.ink, alignSelf: 'flex-start', paddingVertical: space.sm },
});
