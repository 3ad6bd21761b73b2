import React from 'react';
import { StyleSheet, Text, View } from 'react-native';
import type { InfiniteData } from '@tanstack/react-query';
import { Page } from './shell';
import { Button, Card, EmptyState } from './ui';
import { QueryView, type QueryState } from './query-state';
import { colors, space, type } from './theme';
import { absoluteTime, relativeTime } from './format';
import { activityWord } from './words';
import type { List } from '../schemas/common';
import type { ActivityRow } from '../hooks/activity';

type State = QueryState<InfiniteData<List<ActivityRow>>> & { hasNextPage: boolean; fetchNextPage: () => unknown; isFetchingNextPage: boolean };

export function ActivityScreen({ state }: { state: State }) {
  return (
    <Page title="Activity" subtitle="Every change, by whom and when">
      <QueryView state={state}>
        {(data) => {
          const rows = data.pages.flatMap((p) => p.rows);
          if (!rows.length) return <EmptyState title="No activity yet" detail="Changes made by people, tokens, loggers and the system appear here." />;
          return (
            <Card style={{ gap: 0 }}>
              {rows.map((r) => (
                <View key={r.id} style={styles.row}>
                  <Text style={type.body}>{r.summary}</Text>
                  <Text style={type.small}>
                    {r.actorName} · {activityWord(r.action)} · <Text aria-label={absoluteTime(r.at)}>{relativeTime(r.at)}</Text>
                  </Text>
                </View>
              ))}
              {state.hasNextPage ? (
                <View style={{ paddingTop: space.md, alignSelf: 'flex-start' }}>
                  <Button label="Show older" variant="secondary" busy={state.isFetchingNextPage} onPress={() => state.fetchNextPage()} />
                </View>
              ) : null}
            </Card>
          );
        }}
      </QueryView>
    </Page>
  );
}

const styles = StyleSheet.create({ row: { paddingVertical: space.sm, borderBottomColor: colors.line, borderBottomWidth: 1, gap: 2 } });
