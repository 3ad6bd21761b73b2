// Fleet views: the fleet table's query as URL search params, the version matrix, lagging
// sites, retries, notes, a logger's timeline, sparklines and "Why no update?". Every list is sorted,
// filtered and paged by the server; the client only carries the query.
import React from 'react';
import { keepPreviousData, useInfiniteQuery, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, query, STALE } from './api';
import { loggerKeys } from './loggers';
import { LIVE_REFRESH_MS, releaseKeys, type Release } from './releases';
import type { List } from '../schemas/common';
import type { LoggerRow as FleetRow } from '../schemas/loggers';
import { CHANNELS, FLEET_FLAGS, LAGGING_REASONS, LOGGER_STATUSES, UPDATE_STATES } from '../schemas/words';
import {
  fleetSortKeys,
  type FleetFlag,
  type FleetList,
  type FleetSortKey,
  type LaggingReason,
  type LaggingList,
  type LaggingSite,
  type RetryAnswer,
  type RetryOrder,
  type Note,
  type Sparklines,
  type TimelineItem,
  type UpdateState,
  type VersionMatrix,
  type WhyAnswer,
  type WhyVerdict,
} from '../schemas/fleet';

export type { FleetRow };

const base = process.env.EXPO_PUBLIC_API_URL ?? '';

// ─── The fleet table's query, as it lives in the URL ─────────────────────────

export type FleetQuery = {
  q?: string;
  siteId?: string;
  modelId?: string;
  board?: string;
  channel?: 'stable' | 'early';
  version?: string;
  flag?: FleetFlag;
  updateState?: UpdateState;
  status?: 'registered' | 'enrolled' | 'retired';
  sort: FleetSortKey;
  dir: 'asc' | 'desc';
  page: number;
  pageSize: 25 | 50 | 100;
  /** Hidden columns, comma-separated in the URL (`cols`); a display choice, not sent to the server. */
  hidden: string[];
};

export const defaultFleetQuery: FleetQuery = { sort: 'serial', dir: 'asc', page: 1, pageSize: 25, hidden: [] };

const one = (v: string | string[] | undefined) => (Array.isArray(v) ? v[0] : v)?.trim() || undefined;
const member = <T extends string>(list: readonly T[], v: string | undefined) => (v && (list as readonly string[]).includes(v) ? (v as T) : undefined);

/** Reads the fleet query from search params; unknown values fall back to the defaults (the server checks again). */
export function fleetQueryFromParams(params: Record<string, string | string[] | undefined>): FleetQuery {
  const page = Number(one(params.page));
  const size = Number(one(params.pageSize));
  return {
    q: one(params.q),
    siteId: one(params.siteId),
    modelId: one(params.modelId),
    board: one(params.board),
    channel: member(CHANNELS, one(params.channel)),
    version: one(params.version),
    flag: member(FLEET_FLAGS, one(params.flag)),
    updateState: member(UPDATE_STATES, one(params.updateState)),
    status: member(LOGGER_STATUSES, one(params.status)),
    sort: member(fleetSortKeys, one(params.sort)) ?? 'serial',
    dir: one(params.dir) === 'desc' ? 'desc' : 'asc',
    page: Number.isInteger(page) && page >= 1 ? page : 1,
    pageSize: size === 50 || size === 100 ? size : 25,
    hidden: (one(params.cols) ?? '').split(',').filter(Boolean),
  };
}

/** The search params of a fleet query: defaults left out so links stay short; cleared keys sent as undefined. */
export function fleetQueryToParams(f: FleetQuery): Record<string, string | undefined> {
  return {
    q: f.q || undefined,
    siteId: f.siteId,
    modelId: f.modelId,
    board: f.board,
    channel: f.channel,
    version: f.version,
    flag: f.flag,
    updateState: f.updateState,
    status: f.status,
    sort: f.sort === 'serial' ? undefined : f.sort,
    dir: f.dir === 'asc' ? undefined : f.dir,
    page: f.page === 1 ? undefined : String(f.page),
    pageSize: f.pageSize === 25 ? undefined : String(f.pageSize),
    cols: f.hidden.length ? f.hidden.join(',') : undefined,
  };
}

/** What the server reads: the filters, sort and page (column choice stays in the browser). */
export function fleetApiQuery(f: FleetQuery, paging = true): string {
  const { hidden: _hidden, page, pageSize, ...rest } = f;
  return query({ ...rest, ...(paging ? { page, pageSize } : {}) });
}

/** A link into the fleet table with some filters set (the overview's figures use it). */
export function fleetHref(filters: Partial<Omit<FleetQuery, 'hidden'>>): string {
  const params = fleetQueryToParams({ ...defaultFleetQuery, ...filters });
  return `/loggers${query(params)}`;
}

export const fleetExportUrl = (f: FleetQuery) => `${base}/api/loggers/export.csv${fleetApiQuery(f, false)}`;

export function useFleet(f: FleetQuery) {
  const path = `/api/loggers${fleetApiQuery(f)}`;
  return useQuery({
    queryKey: [...loggerKeys.lists(), 'fleet', path],
    staleTime: STALE.SECONDS.THIRTY,
    placeholderData: keepPreviousData,
    queryFn: () => api<FleetList>(path),
  });
}

// ─── Version matrix ─────────────────────────────────────────────────────────

export const fleetKeys = {
  all: ['fleet'] as const,
  versions: () => [...fleetKeys.all, 'versions'] as const,
  lagging: (q: LaggingFilter) => [...fleetKeys.all, 'lagging', q] as const,
  laggingSite: (siteId: string) => [...fleetKeys.all, 'lagging-site', siteId] as const,
  timeline: (loggerId: string) => [...fleetKeys.all, 'timeline', loggerId] as const,
  siteNotes: (siteId: string) => [...fleetKeys.all, 'site-notes', siteId] as const,
  sparklines: (loggerId: string, days: number) => [...fleetKeys.all, 'sparklines', loggerId, days] as const,
  why: (loggerId: string) => [...fleetKeys.all, 'why', loggerId] as const,
};

export function useVersionMatrix() {
  return useQuery({ queryKey: fleetKeys.versions(), staleTime: STALE.MINUTES.ONE, queryFn: () => api<VersionMatrix>('/api/fleet/versions') });
}

/**
 * Keeps a live release's page fresh (pilot, widening): a second observer of the release's query that
 * refetches every 15 s, in step with its dashboard. TanStack Query stops interval refetches while the tab
 * is hidden (the root layout wires focusManager to visibilitychange; refetchIntervalInBackground stays false).
 */
export function useLiveRelease(releaseId: string, live: boolean) {
  useQuery({
    queryKey: releaseKeys.detail(releaseId),
    enabled: live && Boolean(releaseId),
    refetchInterval: live ? LIVE_REFRESH_MS : false,
    refetchIntervalInBackground: false,
    queryFn: () => api<Release>(`/api/releases/${encodeURIComponent(releaseId)}`),
  });
}

// ─── Lagging sites ──────────────────────────────────────────────────────────

export type LaggingFilter = { reason?: LaggingReason; customer?: string; sort: 'lagging_since' | 'behind'; dir: 'asc' | 'desc'; page: number; pageSize: 25 | 50 | 100 };

export function laggingFilterFromParams(params: Record<string, string | string[] | undefined>): LaggingFilter {
  const page = Number(one(params.page));
  const size = Number(one(params.pageSize));
  const sort = one(params.sort) === 'behind' ? 'behind' : 'lagging_since';
  return {
    reason: member(LAGGING_REASONS, one(params.reason)),
    customer: one(params.customer),
    sort,
    // Longest lagging first (oldest since) and most behind first are the useful defaults.
    dir: member(['asc', 'desc'] as const, one(params.dir)) ?? (sort === 'behind' ? 'desc' : 'asc'),
    page: Number.isInteger(page) && page >= 1 ? page : 1,
    pageSize: size === 50 || size === 100 ? size : 25,
  };
}

export function laggingFilterToParams(f: LaggingFilter): Record<string, string | undefined> {
  return {
    reason: f.reason,
    customer: f.customer || undefined,
    sort: f.sort === 'lagging_since' ? undefined : f.sort,
    dir: f.dir,
    page: f.page === 1 ? undefined : String(f.page),
    pageSize: f.pageSize === 25 ? undefined : String(f.pageSize),
  };
}

export const laggingExportUrl = (f: LaggingFilter) => `${base}/api/fleet/lagging-sites/export.csv${query({ reason: f.reason, customer: f.customer, sort: f.sort, dir: f.dir })}`;

export function useLaggingSites(f: LaggingFilter) {
  return useQuery({
    queryKey: fleetKeys.lagging(f),
    staleTime: STALE.SECONDS.THIRTY,
    placeholderData: keepPreviousData,
    queryFn: () => api<LaggingList>(`/api/fleet/lagging-sites${query(f)}`),
  });
}

/**
 * One lagging site with its loggers. The list answers whole sites with their loggers, so the site is
 * read from it (asking by siteId first, then walking pages of 100 until it appears).
 */
export function useLaggingSite(siteId: string | undefined) {
  return useQuery({
    queryKey: fleetKeys.laggingSite(siteId ?? ''),
    enabled: Boolean(siteId),
    staleTime: STALE.SECONDS.THIRTY,
    queryFn: async (): Promise<LaggingSite | null> => {
      for (let page = 1; page <= 1000; page++) {
        const list = await api<LaggingList>(`/api/fleet/lagging-sites${query({ siteId, page, pageSize: 100 })}`);
        const found = list.rows.find((r) => r.siteId === siteId);
        if (found) return found;
        if (page * 100 >= list.total || !list.rows.length) return null;
      }
      return null;
    },
  });
}

/**
 * Clears failed installs so the next check-in offers the release again: each order names the release
 * and some loggers or a whole site. Orders run one after another; the answer is the total cleared.
 */
export function useRetryInstall() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: async (orders: RetryOrder[]) => {
      let retried = 0;
      for (const { releaseId, ...body } of orders) retried += (await api<RetryAnswer>(`/api/releases/${releaseId}/retry`, { body })).retried;
      return { retried };
    },
    onSettled: () => Promise.all([qc.invalidateQueries({ queryKey: fleetKeys.all }), qc.invalidateQueries({ queryKey: loggerKeys.all }), qc.invalidateQueries({ queryKey: releaseKeys.all })]),
  });
}

// ─── Notes, timeline, sparklines, why ───────────────────────────────────────

export function useAddNote(target: 'loggers' | 'sites', id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (text: string) => api<Note>(`/api/${target}/${id}/notes`, { body: { text } }),
    onSuccess: () =>
      Promise.all([
        qc.invalidateQueries({ queryKey: target === 'loggers' ? fleetKeys.timeline(id) : fleetKeys.siteNotes(id) }),
        ...(target === 'sites' ? [qc.invalidateQueries({ queryKey: ['sites'] })] : []),
        qc.invalidateQueries({ queryKey: ['activity'] }),
      ]),
  });
}

export function useTimeline(loggerId: string | undefined) {
  return useInfiniteQuery({
    queryKey: fleetKeys.timeline(loggerId ?? ''),
    enabled: Boolean(loggerId),
    staleTime: STALE.SECONDS.THIRTY,
    initialPageParam: undefined as string | undefined,
    queryFn: ({ pageParam }) => api<List<TimelineItem>>(`/api/loggers/${loggerId}/timeline${query({ cursor: pageParam, limit: 25 })}`),
    getNextPageParam: (last) => last.nextCursor ?? undefined,
  });
}

/** A site's notes, newest first; older pages on request. */
export function useSiteNotes(siteId: string | undefined) {
  return useInfiniteQuery({
    queryKey: fleetKeys.siteNotes(siteId ?? ''),
    enabled: Boolean(siteId),
    staleTime: STALE.SECONDS.THIRTY,
    initialPageParam: undefined as string | undefined,
    queryFn: ({ pageParam }) => api<List<Note>>(`/api/sites/${siteId}/notes${query({ cursor: pageParam, limit: 20 })}`),
    getNextPageParam: (last) => last.nextCursor ?? undefined,
  });
}

/**
 * What the site notes panel shows and does: the stored notes, and the form for people who may write
 * (`canWrite`). The site page and the lagging site's page both show it.
 */
export function useSiteNotesPanel(siteId: string | undefined, canWrite: boolean) {
  const notes = useSiteNotes(siteId);
  const add = useAddNote('sites', siteId ?? '');
  const [saved, setSaved] = React.useState(false);
  return {
    state: {
      pages: notes.data?.pages ?? [],
      isPending: notes.isPending,
      error: notes.error,
      refetch: () => notes.refetch(),
      hasNextPage: notes.hasNextPage,
      isFetchingNextPage: notes.isFetchingNextPage,
      fetchNextPage: () => notes.fetchNextPage(),
    },
    write: canWrite
      ? {
          busy: add.isPending,
          error: add.error,
          done: saved,
          onAdd: (text: string, clear: () => void) => {
            setSaved(false);
            add.mutate(text, {
              onSuccess: () => {
                clear();
                setSaved(true);
              },
            });
          },
        }
      : undefined,
  };
}

export function useSparklines(loggerId: string | undefined, days = 7) {
  return useQuery({
    queryKey: fleetKeys.sparklines(loggerId ?? '', days),
    enabled: Boolean(loggerId),
    staleTime: STALE.MINUTES.FIVE,
    queryFn: () => api<Sparklines>(`/api/loggers/${loggerId}/sparklines${query({ days })}`),
  });
}

/** One release's verdict for the logger (the device API's offer decision), with its reason in words. */
export type { WhyAnswer, WhyVerdict };

export function useWhyNoUpdate(loggerId: string | undefined) {
  return useQuery({
    queryKey: fleetKeys.why(loggerId ?? ''),
    enabled: Boolean(loggerId),
    staleTime: STALE.SECONDS.THIRTY,
    queryFn: () => api<WhyAnswer>(`/api/loggers/${loggerId}/why`),
  });
}
