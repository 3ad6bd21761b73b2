// Enroll: `/enroll?t=<token>` (the label's link) starts with the token filled in; otherwise the camera.
import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { EnrollDone, EnrollForm, EnrollScan } from '../../components/enroll-screen';
import { readEnrollmentCode } from '../../components/enroll-code';
import { useEnroll, useEnrollmentLookup, useUploadPhoto, type EnrollInput } from '../../hooks/loggers';
import { useCreateSite, useSites } from '../../hooks/sites';
import { useBreakpoints } from '../../components/breakpoints';

type Done = { serial: string; loggerId: string; siteName: string; photo: File | null };

export default function Enroll() {
  const params = useLocalSearchParams<{ t?: string }>();
  const router = useRouter();
  const { wide } = useBreakpoints();
  const lookup = useEnrollmentLookup();
  const enroll = useEnroll();
  const createSite = useCreateSite();
  const [progress, setProgress] = React.useState(0);
  const photo = useUploadPhoto(setProgress);
  const [token, setToken] = React.useState<string | null>(null);
  const [siteQuery, setSiteQuery] = React.useState('');
  const [done, setDone] = React.useState<Done | null>(null);
  const sites = useSites(siteQuery.trim() || undefined);

  const start = React.useCallback(
    (t: string) => {
      setToken(t);
      lookup.mutate(t);
    },
    [lookup.mutate],
  );

  // The label's link carries the token; look it up once on arrival.
  const fromLink = typeof params.t === 'string' ? params.t : undefined;
  const started = React.useRef<string | null>(null);
  React.useEffect(() => {
    if (!fromLink || started.current === fromLink) return;
    started.current = fromLink;
    const reading = readEnrollmentCode(fromLink);
    if (reading.ok) start(reading.token);
  }, [fromLink, start]);

  const reset = () => {
    lookup.reset();
    enroll.reset();
    photo.reset();
    setToken(null);
    setDone(null);
    setProgress(0);
    if (fromLink) router.replace('/enroll');
  };

  const uploadPhoto = (loggerId: string, file: File) => {
    setProgress(0);
    photo.mutate({ loggerId, file });
  };

  if (done) {
    return (
      <EnrollDone
        serial={done.serial}
        loggerId={done.loggerId}
        siteName={done.siteName}
        photo={{
          state: !done.photo ? 'none' : photo.isPending ? 'uploading' : photo.isError ? 'failed' : photo.isSuccess ? 'done' : 'uploading',
          progress,
          error: photo.error,
          retry: done.photo ? () => uploadPhoto(done.loggerId, done.photo as File) : undefined,
        }}
        onAnother={reset}
      />
    );
  }

  if (lookup.data && token) {
    return (
      <EnrollForm
        key={lookup.data.logger.id}
        lookup={lookup.data}
        token={token}
        sites={{ rows: sites.data?.rows ?? [], loading: sites.isPending, error: sites.error }}
        siteQuery={siteQuery}
        onSiteQuery={setSiteQuery}
        createSite={{
          busy: createSite.isPending,
          error: createSite.error,
          run: (input, then) => createSite.mutate(input, { onSuccess: then }),
        }}
        enroll={{
          busy: enroll.isPending,
          error: enroll.error,
          run: (input: EnrollInput, file) =>
            enroll.mutate(input, {
              onSuccess: ({ logger }) => {
                setDone({ serial: logger.serial, loggerId: logger.id, siteName: logger.site?.name ?? 'the site', photo: file });
                if (file) uploadPhoto(logger.id, file);
              },
            }),
        }}
        onRescan={reset}
        wide={wide}
      />
    );
  }

  return <EnrollScan busy={lookup.isPending} error={lookup.error} onToken={start} />;
}
