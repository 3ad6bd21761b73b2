// Sites: where loggers are installed. Integrators see (and edit) the sites assigned to them.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, query, STALE } from './api';
import type { List } from '../schemas/common';

export type Site = {
  id: string;
  name: string;
  customer: string;
  address: string;
  latitude: number | null;
  longitude: number | null;
  timeZone: string;
  notes: string | null;
  integratorIds: string[];
  integrators: { id: string; name: string }[];
  loggerCount: number;
  createdAt: string;
};
export type SiteInput = {
  name: string;
  customer: string;
  address: string;
  latitude?: number | null;
  longitude?: number | null;
  timeZone: string;
  notes?: string;
  integratorIds?: string[];
};
export type Person = { id: string; email: string; name: string; role: string };

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
