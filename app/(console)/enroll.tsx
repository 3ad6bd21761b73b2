// Enroll: `/enroll?t=<token>` (the label's link) starts with the token filled in; otherwise the camera.
// Without a connection when Enroll is pressed, the enrollment is kept on the phone and sent later
// (hooks/enrollment-queue.ts).
import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { EnrollDone, EnrollForm, EnrollQueue, EnrollSaved, EnrollScan } from '../../components/enroll-screen';
import { readEnrollmentCode } from '../../components/enroll-code';
import { useEnroll, useEnrollmentLookup, useUploadPhoto, type EnrollInput } from '../../hooks/loggers';
import { useCreateSite, useSitesForEnroll } from '../../hooks/sites';
import { useMe } from '../../hooks/session';
import { isOffline, newEnrollmentId, queueEnrollment, useQueuedEnrollments } from '../../hooks/enrollment-queue';
import { useBreakpoints } from '../../components/breakpoints';

type Done = { serial: string; loggerId: string; siteName: string; photo: File | null };

export default function Enroll() {
  const params = useLocalSearchParams<{ t?: string }>();
  const router = useRouter();
  const { wide } = useBreakpoints();
  const me = useMe();
  const personId = me.data?.id;
  const lookup = useEnrollmentLookup();
  const enroll = useEnroll();
  const createSite = useCreateSite();
  const [progress, setProgress] = React.useState(0);
  const photo = useUploadPhoto(setProgress);
  const [token, setToken] = React.useState<string | null>(null);
  const [siteQuery, setSiteQuery] = React.useState('');
  const [done, setDone] = React.useState<Done | null>(null);
  const [savedId, setSavedId] = React.useState<string | null>(null);
  const sites = useSitesForEnroll(personId, siteQuery.trim() || undefined);
  const queued = useQueuedEnrollments(personId);

  // Opening the screen tries whatever waits on the phone (the console's start and the `online` event do too).
  React.useEffect(() => {
    if (personId) void queued.sendNow();
  }, [personId]); // eslint-disable-line react-hooks/exhaustive-deps

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
    setSavedId(null);
    setProgress(0);
    if (fromLink) router.replace('/enroll');
  };

  const uploadPhoto = (loggerId: string, file: File) => {
    setProgress(0);
    photo.mutate({ loggerId, file });
  };

  const discard = (id: string) => void queued.discard(id);

  if (savedId) {
    return (
      <EnrollSaved
        entry={queued.queue.find((e) => e.id === savedId) ?? null}
        answer={queued.sent[savedId]}
        onDiscard={(id) => {
          discard(id);
          reset();
        }}
        onAnother={reset}
      />
    );
  }

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

  if (lookup.data && token && personId) {
    const { logger } = lookup.data;
    return (
      <EnrollForm
        key={logger.id}
        lookup={lookup.data}
        token={token}
        sites={{ rows: sites.data?.rows ?? [], loading: sites.isPending, error: sites.error, onPhone: sites.data?.onPhone }}
        siteQuery={siteQuery}
        onSiteQuery={setSiteQuery}
        createSite={{
          busy: createSite.isPending,
          error: createSite.error,
          run: (input, then) => createSite.mutate(input, { onSuccess: then }),
        }}
        enroll={{
          busy: enroll.isPending,
          error: isOffline(enroll.error) ? null : enroll.error,
          run: (input: EnrollInput, file, siteName) => {
            // The phone's id for this enrollment: a copy sent again is answered, never enrolled twice.
            const body = { ...input, enrollmentId: newEnrollmentId() };
            enroll.mutate(body, {
              onSuccess: ({ logger: enrolled }) => {
                setDone({ serial: enrolled.serial, loggerId: enrolled.id, siteName: enrolled.site?.name ?? 'the site', photo: file });
                if (file) uploadPhoto(enrolled.id, file);
              },
              onError: (err) => {
                if (!isOffline(err)) return;
                void queueEnrollment({
                  id: body.enrollmentId,
                  personId,
                  body,
                  logger: { id: logger.id, serial: logger.serial, modelName: logger.modelName, board: logger.board },
                  siteName,
                  photo: file,
                  photoName: file?.name ?? null,
                }).then((entry) => setSavedId(entry.id));
              },
            });
          },
        }}
        onRescan={reset}
        wide={wide}
      />
    );
  }

  return (
    <EnrollScan busy={lookup.isPending} error={lookup.error} onToken={start}>
      <EnrollQueue queue={queued.queue} sent={queued.sent} onSendNow={() => void queued.sendNow()} onDiscard={discard} />
    </EnrollScan>
  );
}
