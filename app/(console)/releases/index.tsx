import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { ReleaseListScreen } from '../../../components/release-list-screen';
import { useBreakpoints } from '../../../components/breakpoints';
import { useReleases, type ReleaseFilter, type ReleaseState, type Channel } from '../../../hooks/releases';
import { useMe } from '../../../hooks/session';

export default function Releases() {
  const params = useLocalSearchParams<{ state?: string; channel?: string }>();
  const router = useRouter();
  const me = useMe();
  const { wide } = useBreakpoints();
  // Filters live in the address, so a filtered list can be shared and survives a reload.
  const filter: ReleaseFilter = { state: (params.state || undefined) as ReleaseState | undefined, channel: (params.channel || undefined) as Channel | undefined };
  const state = useReleases(filter);
  return (
    <ReleaseListScreen
      state={state}
      filter={filter}
      onFilterChange={(f) => router.setParams({ state: f.state ?? '', channel: f.channel ?? '' })}
      canCreate={me.data?.can.createRelease ?? false}
      onNew={() => router.push('/releases/new' as never)}
      wide={wide}
    />
  );
}
