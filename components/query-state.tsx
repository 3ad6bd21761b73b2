// Renders the three states every screen has: loading (skeleton), failed (notice + retry), data.
import React from 'react';
import { View } from 'react-native';
import { Button, Notice, Skeleton } from './ui';
import { space } from './theme';

export type QueryState<T> = { data?: T; isPending: boolean; error: Error | null; refetch: () => unknown };

export function QueryView<T>({ state, rows = 4, children }: { state: QueryState<T>; rows?: number; children: (data: T) => React.ReactNode }) {
  if (state.isPending) return <Skeleton rows={rows} />;
  if (state.error || state.data === undefined) {
    const e = state.error as (Error & { title?: string; detail?: string }) | null;
    return (
      <View style={{ gap: space.sm }}>
        <Notice title={e?.title ?? 'Could not load this'} detail={e?.detail ?? e?.message ?? 'Try again.'} />
        <View style={{ alignSelf: 'flex-start' }}>
          <Button label="Try again" variant="secondary" onPress={() => state.refetch()} />
        </View>
      </View>
    );
  }
  return <>{children(state.data)}</>;
}
