import { useQuery } from '@tanstack/react-query';
import { api, STALE } from './api';
import { overviewSchema, type Overview } from '../schemas/overview';

export type { Overview };

export const overviewKeys = { all: ['overview'] as const };

export function useOverview() {
  return useQuery({
    queryKey: overviewKeys.all,
    staleTime: STALE.SECONDS.THIRTY,
    refetchInterval: 60_000,
    queryFn: () => api('/api/overview', {}, overviewSchema),
  });
}
