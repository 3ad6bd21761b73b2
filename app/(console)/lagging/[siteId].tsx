import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { LaggingSiteScreen } from '../../../components/fleet-lagging';
import { useLaggingSite, useRetryInstall } from '../../../hooks/fleet';
import { useReleases } from '../../../hooks/releases';
import { useMe } from '../../../hooks/session';
import { ApiError } from '../../../hooks/api';

export default function LaggingSitePage() {
  const { siteId } = useLocalSearchParams<{ siteId: string }>();
  const router = useRouter();
  const me = useMe();
  const site = useLaggingSite(siteId);
  const canRetry = me.data?.role === 'admin' || me.data?.role === 'release_engineer';
  // The release a failed install was of, found by its version among the releases people can see.
  const releases = useReleases();
  const retry = useRetryInstall();
  const [failure, setFailure] = React.useState<Error | null>(null);
  return (
    <LaggingSiteScreen
      state={site}
      canRetry={canRetry}
      retry={{
        busy: retry.isPending,
        error: failure ?? retry.error,
        done: retry.data?.retried ?? null,
        run: (target, version) => {
          setFailure(null);
          const release = releases.data?.rows.find((r) => r.version === version && r.state !== 'withdrawn' && r.state !== 'draft');
          if (!release) {
            setFailure(new ApiError(404, { title: 'Release not found', detail: `No live release ${version} is visible to you; open the release to retry from there.` }));
            return;
          }
          retry.mutate({ releaseId: release.id, ...target });
        },
      }}
      onOpenLogger={(id) => router.push(`/loggers/${id}` as never)}
      onOpenSite={(id) => router.push(`/sites/${id}` as never)}
      onBack={() => router.push('/lagging' as never)}
    />
  );
}
