import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { ReleaseDetailScreen, type PendingMove } from '../../../components/release-detail-screen';
import { ReleaseTargetingForm } from '../../../components/release-targeting-form';
import { useBreakpoints } from '../../../components/breakpoints';
import { ApiError } from '../../../hooks/api';
import {
  useDeleteRelease,
  useRelease,
  useReleaseDashboard,
  useReleaseEstimate,
  useReleaseSites,
  useReleaseTransition,
  useSiteChoices,
  useUpdateRelease,
  type ReleaseTargeting,
} from '../../../hooks/releases';
import { ReleaseDashboard, SITE_PAGE_SIZE } from '../../../components/release-dashboard';
import { useLiveRelease } from '../../../hooks/fleet';

export default function ReleaseDetail() {
  const { id = '' } = useLocalSearchParams<{ id: string }>();
  const router = useRouter();
  const { wide } = useBreakpoints();
  const release = useRelease(id);
  const live = release.data?.state === 'pilot' || release.data?.state === 'widening';
  useLiveRelease(id, live);
  const started = Boolean(release.data && release.data.state !== 'draft');
  const dashboard = useReleaseDashboard(started ? id : '', live);
  const [sitePage, setSitePage] = React.useState(1);
  const siteRows = useReleaseSites(started ? id : '', sitePage, SITE_PAGE_SIZE, live);
  const [pending, setPending] = React.useState<PendingMove | null>(null);
  const estimateShare = pending && (pending.action === 'widen' || pending.action === 'complete') ? (pending.action === 'complete' ? 100 : (pending.share ?? null)) : null;
  const estimate = useReleaseEstimate(id, estimateShare);
  const transition = useReleaseTransition(id);
  const remove = useDeleteRelease(id);
  const update = useUpdateRelease(id);
  // The draft's targeting is edited by those the release's `can` allows (drafts only).
  const canEdit = release.data?.can.edit ?? false;
  const sites = useSiteChoices(canEdit);
  const [pilotOpen, setPilotOpen] = React.useState(false);
  const [saved, setSaved] = React.useState(false);

  const onPending = (p: PendingMove | null) => {
    transition.reset();
    remove.reset();
    setPending(p);
  };

  const startPilot = async (t: ReleaseTargeting) => {
    try {
      await update.mutateAsync(t);
      await transition.mutateAsync({ action: 'start_pilot' });
      setPilotOpen(false);
    } catch {
      // Shown in the dialog.
    }
  };

  return (
    <ReleaseDetailScreen
      state={release}
      wide={wide}
      pending={pending}
      onPending={onPending}
      estimate={estimate}
      busy={transition.isPending || remove.isPending}
      error={(pending?.action === 'delete' ? remove.error : transition.error) as ApiError | null}
      onTransition={(t) => transition.mutate(t, { onSuccess: () => setPending(null) })}
      onDelete={() => remove.mutate(undefined, { onSuccess: () => router.replace('/releases' as never) })}
      dashboard={(r) => (
        <ReleaseDashboard
          version={r.version}
          state={dashboard}
          sitePage={sitePage}
          sites={siteRows}
          onSitePage={setSitePage}
          onOpenSite={(siteId) => router.push(`/sites/${siteId}` as never)}
          refreshing={live}
          wide={wide}
        />
      )}
      targeting={
        canEdit && release.data ? (
          <ReleaseTargetingForm
            key={release.data.id}
            release={release.data}
            sites={sites}
            saving={update.isPending && !pilotOpen}
            starting={pilotOpen && (update.isPending || transition.isPending)}
            saved={saved}
            error={!pilotOpen ? (update.error as ApiError | null) : null}
            startError={(transition.error ?? update.error) as ApiError | null}
            onSave={(t) => update.mutate(t, { onSuccess: () => setSaved(true) })}
            onStartPilot={startPilot}
            confirmOpen={pilotOpen}
            onConfirmOpen={(open) => {
              update.reset();
              transition.reset();
              setPilotOpen(open);
            }}
          />
        ) : undefined
      }
    />
  );
}
