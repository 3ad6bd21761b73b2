// Sites: where loggers are installed. Integrators see (and edit) the sites assigned to them.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, ApiError, query, STALE } from './api';
import { keepSites, sitesOnPhone } from './phone-store';
import type { z } from 'zod';
import type { List } from '../schemas/common';
import type { Person as TeamMember } from '../schemas/auth';
import type { createSiteRequest, SiteView } from '../schemas/sites';

// Shapes from schemas/ (the server promises the answers); screens import them from here.
export type Site = SiteView;
export type SiteInput = z.input<typeof createSiteRequest>;
/** A person on the team as GET /api/users answers (used to assign integrators). */
export type Person = TeamMember;

export const siteKeys = {
  all: ['sites'] as const,
  list: (q?: string) => [...siteKeys.all, 'list', q ?? ''] as const,
  detail: (id: string) => [...siteKeys.all, 'detail', id] as const,
  integrators: ['users', 'integrators'] as const,
};

export function useSites(q?: string) {
  return useQuery({
    queryKey: siteKeys.list(q),
    staleTime: STALE.SECONDS.THIRTY,
    placeholderData: (previous) => previous,
    queryFn: () => api<List<Site>>(`/api/sites${query({ q })}`),
  });
}

export function useSite(id: string | undefined) {
  return useQuery({ queryKey: siteKeys.detail(id ?? ''), enabled: Boolean(id), queryFn: () => api<Site>(`/api/sites/${id}`) });
}

/** Integrators an admin can assign to a site. */
export function useIntegrators(enabled = true) {
  return useQuery({
    queryKey: siteKeys.integrators,
    enabled,
    staleTime: STALE.MINUTES.FIVE,
    queryFn: () => api<List<Person>>('/api/users?role=integrator'),
  });
}

export function useCreateSite() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: SiteInput) => api<Site>('/api/sites', { body }),
    onSuccess: (site) => {
      qc.setQueryData(siteKeys.detail(site.id), site);
      return qc.invalidateQueries({ queryKey: [...siteKeys.all, 'list'] });
    },
  });
}

export function useUpdateSite(id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: Partial<SiteInput>) => api<Site>(`/api/sites/${id}`, { method: 'PATCH', body }),
    onSuccess: (site) => {
      qc.setQueryData(siteKeys.detail(id), site);
      return qc.invalidateQueries({ queryKey: [...siteKeys.all, 'list'] });
    },
  });
}

/** Matches the server's site search (name, customer or address containing the words, any case) on the phone's copy. */
function matchesSite(site: Site, q: string): boolean {
  const needle = q.trim().toLocaleLowerCase();
  return !needle || [site.name, site.customer, site.address].some((v) => (v ?? '').toLocaleLowerCase().includes(needle));
}

export type SitesForEnroll = List<Site> & { onPhone: null | { savedAt: string } };

/**
 * The sites an integrator may enroll at, usable without signal: each full list the server sends is kept
 * on the phone, and when the server cannot be reached the phone's copy answers (searched the same way).
 * `networkMode: 'always'` so the request is tried, and fails over to the copy, even while the browser
 * says it is offline.
 */
export function useSitesForEnroll(personId: string | undefined, q?: string) {
  return useQuery({
    queryKey: [...siteKeys.all, 'enroll', personId ?? '', q ?? ''] as const,
    enabled: Boolean(personId),
    networkMode: 'always',
    staleTime: STALE.SECONDS.THIRTY,
    placeholderData: (previous) => previous,
    queryFn: async (): Promise<SitesForEnroll> => {
      try {
        const list = await api<List<Site>>(`/api/sites${query({ q })}`);
        if (!q) await keepSites(personId!, list.rows).catch(() => undefined);
        return { ...list, onPhone: null };
      } catch (err) {
        if (!(err instanceof ApiError && err.status === 0)) throw err;
        const kept = await sitesOnPhone(personId!);
        if (!kept) throw err;
        const rows = kept.rows.filter((s) => matchesSite(s, q ?? ''));
        return { rows, total: rows.length, onPhone: { savedAt: kept.savedAt } };
      }
    },
  });
}
