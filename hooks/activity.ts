import { useInfiniteQuery } from '@tanstack/react-query';
import { api, query } from './api';
import type { List } from '../schemas/common';

export type ActivityRow = { id: number; at: string; actorType: string; actorName: string; action: string; targetType: string; targetId: string | null; summary: string };

export const activityKeys = { list: (filter: { targetType?: string; targetId?: string }) => ['activity', filter] as const };

export function useActivity(filter: { targetType?: string; targetId?: string } = {}) {
  return useInfiniteQuery({
    queryKey: activityKeys.list(filter),
    initialPageParam: undefined as string | undefined,
    queryFn: ({ pageParam }) => api<List<ActivityRow>>(`/api/activity${query({ ...filter, before: pageParam, pageSize: 50 })}`),
    getNextPageParam: (last) => last.nextCursor,
  });
}
