// Sites: where loggers are installed. Integrators see (and edit) the sites assigned to them.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, query, STALE } from './api';
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
