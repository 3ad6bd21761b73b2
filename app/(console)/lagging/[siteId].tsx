import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { View } from 'react-native';
import { LaggingSiteScreen } from '../../../components/fleet-lagging';
import { SiteNotes } from '../../../components/fleet-logger';
import { useLaggingSite, useRetryInstall, useSiteNotesPanel } from '../../../hooks/fleet';

export default function LaggingSitePage() {
  const { siteId } = useLocalSearchParams<{ siteId: string }>();
  const router = useRouter();
  const site = useLaggingSite(siteId);
  const retry = useRetryInstall();
  // Support reads what colleagues noted about the site (a visit booked, shading) beside the reasons.
  const notes = useSiteNotesPanel(site.data ? siteId : undefined, site.data?.can.addNote ?? false);
  return (
    <View style={{ gap: 24 }}>
      <LaggingSiteScreen
        state={site}
        canRetry={site.data?.can.retry ?? false}
        retry={{
          busy: retry.isPending,
          error: retry.error,
          done: retry.data?.retried ?? null,
          run: (orders) => retry.mutate(orders),
        }}
        onOpenLogger={(id) => router.push(`/loggers/${id}` as never)}
        onOpenSite={(id) => router.push(`/sites/${id}` as never)}
        onBack={() => router.push('/lagging' as never)}
      />
      {site.data ? <SiteNotes {...notes} timeZone={site.data.timeZone} /> : null}
    </View>
  );
}
