import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { SiteScreen } from '../../../components/sites-screen';
import { useIntegrators, useSite, useUpdateSite } from '../../../hooks/sites';
import { useLoggers } from '../../../hooks/loggers';
import { useMe } from '../../../hooks/session';
import { useModels } from '../../../hooks/models';
import { View } from 'react-native';
import { SiteNotes } from '../../../components/fleet-logger';
import { useAddNote, useSiteNotes } from '../../../hooks/fleet';

export default function SitePage() {
  const { id } = useLocalSearchParams<{ id: string }>();
  const router = useRouter();
  const me = useMe();
  const site = useSite(id);
  const loggers = useLoggers({ siteId: id, pageSize: 100 });
  const role = me.data?.role;
  const integrators = useIntegrators(role === 'admin');
  const save = useUpdateSite(id);
  const models = useModels();
  const intervals = React.useMemo(() => Object.fromEntries((models.data?.rows ?? []).map((m) => [m.id, m.checkInIntervalS])), [models.data]);
  const note = useAddNote('sites', id);
  const notes = useSiteNotes(site.data ? id : undefined);
  const [saved, setSaved] = React.useState(false);
  const canNote = role === 'support' || role === 'release_engineer' || role === 'admin';
  return (
    <View style={{ gap: 24 }}>
      <SiteScreen
        state={site}
        loggers={loggers}
        canEdit={(s) => role === 'admin' || (role === 'integrator' && !!me.data && s.integratorIds.includes(me.data.id))}
        integrators={role === 'admin' ? integrators.data?.rows ?? [] : undefined}
        save={{ busy: save.isPending, error: save.error, run: (input, done) => save.mutate(input, { onSuccess: done }) }}
        intervals={intervals}
        onOpenLogger={(loggerId) => router.push(`/loggers/${loggerId}` as never)}
      />
      {site.data ? (
        <SiteNotes
          state={{
            pages: notes.data?.pages ?? [],
            isPending: notes.isPending,
            error: notes.error,
            refetch: () => notes.refetch(),
            hasNextPage: notes.hasNextPage,
            isFetchingNextPage: notes.isFetchingNextPage,
            fetchNextPage: () => notes.fetchNextPage(),
          }}
          write={
            canNote
              ? {
                  busy: note.isPending,
                  error: note.error,
                  done: saved,
                  onAdd: (text, clear) => {
                    setSaved(false);
                    note.mutate(text, {
                      onSuccess: () => {
                        clear();
                        setSaved(true);
                      },
                    });
                  },
                }
              : undefined
          }
        />
      ) : null}
    </View>
  );
}
