import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { SiteScreen } from '../../../components/sites-screen';
import { useIntegrators, useSite, useUpdateSite } from '../../../hooks/sites';
import { useLoggers } from '../../../hooks/loggers';
import { useMe } from '../../../hooks/session';

export default function SitePage() {
  const { id } = useLocalSearchParams<{ id: string }>();
  const router = useRouter();
  const me = useMe();
  const site = useSite(id);
  const loggers = useLoggers({ siteId: id, pageSize: 100 });
  const role = me.data?.role;
  const integrators = useIntegrators(role === 'admin');
  const save = useUpdateSite(id);
  return (
    <SiteScreen
      state={site}
      loggers={loggers}
      canEdit={(s) => role === 'admin' || (role === 'integrator' && !!me.data && s.integratorIds.includes(me.data.id))}
      integrators={role === 'admin' ? integrators.data?.rows ?? [] : undefined}
      save={{ busy: save.isPending, error: save.error, run: (input, done) => save.mutate(input, { onSuccess: done }) }}
      onOpenLogger={(loggerId) => router.push(`/loggers/${loggerId}` as never)}
    />
  );
}
