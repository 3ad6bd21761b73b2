import { useInfiniteQuery } from '@tanstack/react-query';
import { api, query } from './api';
import type { List } from '../schemas/common';
import type { ActivityView } from '../schemas/activity';

// The row's shape lives in schemas/activity.ts (the server promises it); screens import it from here.
export type ActivityRow = ActivityView;

export const activityKeys = { list: (filter: { targetType?: string; targetId?: string }) => ['activity', filter] as const };

export function useActivity(filter: { targetType?: string; targetId?: string } = {}) {
  return useInfiniteQuery({
    queryKey: activityKeys.list(filter),
    initialPageParam: undefined as string | undefined,
    queryFn: ({ pageParam }) => api<List<ActivityRow>>(`/api/activity${query({ ...filter, before: pageParam, pageSize: 50 })}`),
    getNextPageParam: (last) => last.nextCursor,
  });
}
