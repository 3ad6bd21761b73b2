import React from 'react';
import { useRouter } from 'expo-router';
import { SitesScreen } from '../../../components/sites-screen';
import { useCreateSite, useIntegrators, useSites } from '../../../hooks/sites';
import { useMe } from '../../../hooks/session';

export default function Sites() {
  const router = useRouter();
  const me = useMe();
  const [q, setQ] = React.useState('');
  const sites = useSites(q.trim() || undefined);
  const can = me.data?.can;
  const integrators = useIntegrators(can?.assignIntegrators ?? false);
  const create = useCreateSite();
  return (
    <SitesScreen
      state={sites}
      q={q}
      onQ={setQ}
      canCreate={can?.createSite ?? false}
      integrators={can?.assignIntegrators ? integrators.data?.rows ?? [] : undefined}
      create={{ busy: create.isPending, error: create.error, run: (input, done) => create.mutate(input, { onSuccess: done }) }}
      onOpen={(id) => router.push(`/sites/${id}` as never)}
    />
  );
}
