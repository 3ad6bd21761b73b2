import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { SiteScreen } from '../../../components/sites-screen';
import { useIntegrators, useSite, useUpdateSite } from '../../../hooks/sites';
import { useLoggers } from '../../../hooks/loggers';
import { useModels } from '../../../hooks/models';
import { View } from 'react-native';
import { SiteNotes } from '../../../components/fleet-logger';
import { useSiteNotesPanel } from '../../../hooks/fleet';

export default function SitePage() {
  const { id } = useLocalSearchParams<{ id: string }>();
  const router = useRouter();
  const site = useSite(id);
  const loggers = useLoggers({ siteId: id, pageSize: 100 });
  const assigns = site.data?.can.assignIntegrators ?? false;
  const integrators = useIntegrators(assigns);
  const save = useUpdateSite(id);
  const models = useModels();
  const intervals = React.useMemo(() => Object.fromEntries((models.data?.rows ?? []).map((m) => [m.id, m.checkInIntervalS])), [models.data]);
  const notes = useSiteNotesPanel(site.data ? id : undefined, site.data?.can.addNote ?? false);
  return (
    <View style={{ gap: 24 }}>
      <SiteScreen
        state={site}
        loggers={loggers}
        integrators={assigns ? integrators.data?.rows ?? [] : undefined}
        save={{ busy: save.isPending, error: save.error, run: (input, done) => save.mutate(input, { onSuccess: done }) }}
        intervals={intervals}
        onOpenLogger={(loggerId) => router.push(`/loggers/${loggerId}` as never)}
      />
      {site.data ? <SiteNotes {...notes} timeZone={site.data.timeZone} /> : null}
    </View>
  );
}
