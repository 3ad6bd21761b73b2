import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { FleetScreen } from '../../../components/fleet-screen';
import { useBreakpoints } from '../../../components/breakpoints';
import { fleetExportUrl, fleetQueryFromParams, fleetQueryToParams, useFleet, type FleetQuery } from '../../../hooks/fleet';
import { useMe } from '../../../hooks/session';
import { useModels } from '../../../hooks/models';
import { useSites } from '../../../hooks/sites';

export default function Loggers() {
  const router = useRouter();
  const params = useLocalSearchParams<Record<string, string>>();
  const me = useMe();
  const { wide } = useBreakpoints();
  const filter = React.useMemo(() => fleetQueryFromParams(params), [params]);
  const fleet = useFleet(filter);
  const models = useModels();
  const sites = useSites();
  const modelOptions = (models.data?.rows ?? []).map((m) => ({ value: m.id, label: m.name }));
  const boardOptions = [...new Set((models.data?.rows ?? []).flatMap((m) => m.boards.map((b) => b.label)))].sort().map((b) => ({ value: b, label: `Board ${b}` }));
  const siteOptions = (sites.data?.rows ?? []).map((s) => ({ value: s.id, label: `${s.name} · ${s.customer}` }));
  return (
    <FleetScreen
      state={fleet}
      filter={filter}
      // The URL is the filter's home: every change goes there, and the view follows.
      onFilter={(next: FleetQuery) => router.setParams(fleetQueryToParams(next))}
      wide={wide}
      sites={siteOptions}
      models={modelOptions}
      boards={boardOptions}
      exportHref={fleetExportUrl(filter)}
      canRegister={me.data?.can.registerLoggers ?? false}
      onRegister={() => router.push('/loggers/register')}
      onOpen={(id) => router.push(`/loggers/${id}` as never)}
    />
  );
}
