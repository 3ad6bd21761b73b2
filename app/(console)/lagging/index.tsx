import React from 'react';
import { useLocalSearchParams, useRouter } from 'expo-router';
import { LaggingSitesScreen } from '../../../components/fleet-lagging';
import { useBreakpoints } from '../../../components/breakpoints';
import { laggingExportUrl, laggingFilterFromParams, laggingFilterToParams, useLaggingSites } from '../../../hooks/fleet';

export default function LaggingSites() {
  const router = useRouter();
  const params = useLocalSearchParams<Record<string, string>>();
  const { wide } = useBreakpoints();
  const filter = React.useMemo(() => laggingFilterFromParams(params), [params]);
  const sites = useLaggingSites(filter);
  return (
    <LaggingSitesScreen
      state={sites}
      filter={filter}
      onFilter={(next) => router.setParams(laggingFilterToParams(next))}
      exportHref={laggingExportUrl(filter)}
      wide={wide}
      onOpen={(siteId) => router.push(`/lagging/${siteId}` as never)}
    />
  );
}
