import React from 'react';
import { useRouter } from 'expo-router';
import { ReleaseNewScreen } from '../../../components/release-new-screen';
import { ReleaseTargetingForm } from '../../../components/release-targeting-form';
import { ApiError } from '../../../hooks/api';
import { useReleaseTransition, useSiteChoices, useUpdateRelease, useUploadRelease, type Release, type ReleaseTargeting } from '../../../hooks/releases';

export default function NewRelease() {
  const router = useRouter();
  const uploadRelease = useUploadRelease();
  const [progress, setProgress] = React.useState<number | null>(null);
  const [created, setCreated] = React.useState<Release | null>(null);
  const id = created?.id ?? '';
  const update = useUpdateRelease(id);
  const transition = useReleaseTransition(id);
  const sites = useSiteChoices(Boolean(created));
  const [confirmOpen, setConfirmOpen] = React.useState(false);
  const [saved, setSaved] = React.useState(false);

  const startPilot = async (t: ReleaseTargeting) => {
    try {
      const r = await update.mutateAsync(t);
      setCreated(r);
      await transition.mutateAsync({ action: 'start_pilot' });
      setConfirmOpen(false);
      router.replace(`/releases/${id}` as never);
    } catch {
      // The dialog and the form show the problem.
    }
  };

  return (
    <ReleaseNewScreen
      uploading={uploadRelease.isPending}
      progress={progress}
      uploadError={uploadRelease.error instanceof ApiError ? uploadRelease.error : (uploadRelease.error as Error | null)}
      created={created}
      onCancel={() => router.back()}
      onUpload={(body) => {
        setProgress(0);
        uploadRelease.mutate({ body, onProgress: setProgress }, { onSuccess: (r) => { setProgress(1); setCreated(r); } });
      }}
      targeting={
        created ? (
          <ReleaseTargetingForm
            release={created}
            sites={sites}
            saving={update.isPending && !confirmOpen}
            starting={confirmOpen && (update.isPending || transition.isPending)}
            saved={saved}
            error={!confirmOpen ? (update.error as ApiError | null) : null}
            startError={(transition.error ?? update.error) as ApiError | null}
            onSave={(t) => update.mutate(t, { onSuccess: (r) => { setCreated(r); setSaved(true); } })}
            onStartPilot={startPilot}
            confirmOpen={confirmOpen}
            onConfirmOpen={(open) => {
              update.reset();
              transition.reset();
              setConfirmOpen(open);
            }}
          />
        ) : null
      }
    />
  );
}
