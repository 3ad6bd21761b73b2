// Releases: signed images uploaded as drafts, their targeting, and the lifecycle.
import { keepPreviousData, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, query, upload, STALE } from './api';
import type { z } from 'zod';
import type { List } from '../schemas/common';
import type {
  Channel,
  FailureReason,
  patchReleaseRequest,
  ReleaseAction,
  ReleaseCounts,
  ReleaseDashboard,
  ReleaseEstimate,
  ReleaseRow,
  ReleaseSiteRow,
  ReleaseState,
  ReleaseTransitionView,
  ReleaseView,
  TransitionRequest,
} from '../schemas/releases';
import type { SiteView } from '../schemas/sites';

// The answers' shapes live in schemas/releases.ts (the server's presenter promises them); screens import them from here.
export type { ReleaseAction, ReleaseState, ReleaseDashboard, ReleaseSiteRow, ReleaseRow, ReleaseCounts, TransitionRequest };

export type { Channel, FailureReason };
export type ReleaseTransition = ReleaseTransitionView;
export type Release = ReleaseView;
export type Estimate = ReleaseEstimate;

export type ReleaseFilter = { state?: ReleaseState; channel?: Channel; modelId?: string };

/** What the targeting form sends while the release is a draft. */
export type ReleaseTargeting = z.input<typeof patchReleaseRequest>;

export const releaseKeys = {
  all: ['releases'] as const,
  lists: () => ['releases', 'list'] as const,
  list: (filter: ReleaseFilter) => ['releases', 'list', filter] as const,
  detail: (id: string) => ['releases', 'detail', id] as const,
  estimate: (id: string, share: number) => ['releases', 'estimate', id, share] as const,
  siteChoices: () => ['releases', 'site-choices'] as const,
  dashboard: (id: string) => ['releases', 'dashboard', id] as const,
  sites: (id: string, page: number, pageSize: number) => ['releases', 'sites', id, page, pageSize] as const,
};

/** How often a live release's page refreshes; interval refetches stop while the tab is hidden. */
export const LIVE_REFRESH_MS = 15_000;

export function useReleases(filter: ReleaseFilter = {}) {
  return useQuery({
    queryKey: releaseKeys.list(filter),
    queryFn: () => api<List<ReleaseRow>>(`/api/releases${query(filter)}`),
    placeholderData: keepPreviousData,
    staleTime: STALE.SECONDS.THIRTY,
  });
}

export function useRelease(id: string) {
  return useQuery({
    queryKey: releaseKeys.detail(id),
    queryFn: () => api<Release>(`/api/releases/${encodeURIComponent(id)}`),
    enabled: Boolean(id),
    // Install reports arrive as loggers check in; a live release refreshes on its own.
    refetchInterval: (q) => (q.state.data && ['pilot', 'widening', 'complete'].includes(q.state.data.state) ? STALE.SECONDS.THIRTY : false),
  });
}

/**
 * The rollout dashboard: breakdowns, time to install, trip gauges, adoption. While the release is live
 * it refreshes every 15 s; TanStack Query pauses interval refetches while the tab is hidden (the root
 * layout wires focusManager to visibilitychange, refetchIntervalInBackground stays false).
 */
export function useReleaseDashboard(id: string, live: boolean) {
  return useQuery({
    queryKey: releaseKeys.dashboard(id),
    queryFn: () => api<ReleaseDashboard>(`/api/releases/${encodeURIComponent(id)}/dashboard`),
    enabled: Boolean(id),
    refetchInterval: live ? LIVE_REFRESH_MS : false,
    refetchIntervalInBackground: false,
  });
}

/** One page of the sites a release reaches, failures first (page 1 comes with the dashboard). */
export function useReleaseSites(id: string, page: number, pageSize: number, live: boolean) {
  return useQuery({
    queryKey: releaseKeys.sites(id, page, pageSize),
    queryFn: () => api<List<ReleaseSiteRow>>(`/api/releases/${encodeURIComponent(id)}/sites${query({ page, pageSize })}`),
    enabled: Boolean(id) && page > 1,
    placeholderData: keepPreviousData,
    refetchInterval: live ? LIVE_REFRESH_MS : false,
    refetchIntervalInBackground: false,
  });
}

/** How many more loggers a share would make eligible (asked only while a confirmation is open). */
export function useReleaseEstimate(id: string, share: number | null) {
  return useQuery({
    queryKey: releaseKeys.estimate(id, share ?? -1),
    queryFn: () => api<Estimate>(`/api/releases/${encodeURIComponent(id)}/estimate${query({ share: share ?? undefined })}`),
    enabled: Boolean(id) && share !== null,
    staleTime: 0,
  });
}

/** Sites to choose pilot sites from: only id and name are needed here. */
export function useSiteChoices(enabled = true) {
  return useQuery({
    queryKey: releaseKeys.siteChoices(),
    queryFn: async () => {
      const list = await api<List<SiteView>>('/api/sites');
      return list.rows.map((s) => ({ id: s.id, name: s.name, customer: s.customer }));
    },
    enabled,
    staleTime: STALE.MINUTES.ONE,
  });
}

/** The upload's parts. On the web a file is a Blob; on a phone a picked document's uri. */
export type UploadPart = { kind: 'file'; name: string; blob?: Blob; uri?: string; mimeType?: string } | { kind: 'text'; text: string };
export type ReleaseUpload = { image: UploadPart & { kind: 'file' }; manifest: UploadPart; signature: UploadPart; notes?: string; channel?: Channel };

function appendPart(form: FormData, field: string, part: UploadPart) {
  if (part.kind === 'text') form.append(field, part.text);
  else if (part.blob) form.append(field, part.blob, part.name);
  // React Native's FormData takes {uri, name, type} for a file on the device.
  else form.append(field, { uri: part.uri, name: part.name, type: part.mimeType ?? 'application/octet-stream' } as unknown as Blob);
}

export function useUploadRelease() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: ({ body, onProgress }: { body: ReleaseUpload; onProgress: (fraction: number) => void }) => {
      const form = new FormData();
      appendPart(form, 'image', body.image);
      appendPart(form, 'manifest', body.manifest);
      appendPart(form, 'signature', body.signature);
      if (body.notes?.trim()) form.append('notes', body.notes);
      if (body.channel) form.append('channel', body.channel);
      return upload<Release>('/api/releases', form, onProgress);
    },
    onSuccess: (release) => {
      qc.invalidateQueries({ queryKey: releaseKeys.lists() });
      if (release?.id) qc.setQueryData(releaseKeys.detail(release.id), (old: Release | undefined) => (old ? { ...old, ...release } : undefined));
    },
  });
}

export function useUpdateRelease(id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: ReleaseTargeting) => api<Release>(`/api/releases/${encodeURIComponent(id)}`, { method: 'PATCH', body }),
    onSuccess: (release) => {
      qc.setQueryData(releaseKeys.detail(id), release);
      qc.invalidateQueries({ queryKey: releaseKeys.lists() });
    },
  });
}

export function useReleaseTransition(id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: TransitionRequest) => api<Release>(`/api/releases/${encodeURIComponent(id)}/transitions`, { body }),
    onSuccess: (release) => {
      qc.setQueryData(releaseKeys.detail(id), release);
      qc.invalidateQueries({ queryKey: releaseKeys.all });
    },
  });
}

export function useDeleteRelease(id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: () => api<void>(`/api/releases/${encodeURIComponent(id)}`, { method: 'DELETE' }),
    onSuccess: () => {
      qc.removeQueries({ queryKey: releaseKeys.detail(id) });
      qc.invalidateQueries({ queryKey: releaseKeys.lists() });
    },
  });
}
