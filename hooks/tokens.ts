// API tokens for automation (CI pushing signed images). The token text is shown once, at creation.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, STALE } from './api';
import type { List } from '../schemas/common';

export const tokenScopes = ['images:write', 'releases:write', 'fleet:read'] as const;
export type TokenScope = (typeof tokenScopes)[number];

export type ApiToken = {
  id: string;
  name: string;
  scopes: TokenScope[];
  expiresAt: string;
  lastUsedAt: string | null;
  createdAt: string;
  revokedAt: string | null;
  createdBy: { id: string; name: string } | null;
};

export type NewToken = { id: string; token: string; name: string; scopes: TokenScope[]; expiresAt: string };

export const tokenKeys = { all: ['tokens'] as const, list: () => ['tokens', 'list'] as const };

export function useTokens() {
  return useQuery({ queryKey: tokenKeys.list(), queryFn: () => api<List<ApiToken>>('/api/tokens'), staleTime: STALE.SECONDS.THIRTY });
}

export function useCreateToken() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: { name: string; scopes: TokenScope[]; expiresAt: string }) => api<NewToken>('/api/tokens', { body }),
    onSuccess: () => qc.invalidateQueries({ queryKey: tokenKeys.all }),
  });
}

export function useRevokeToken() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (id: string) => api<void>(`/api/tokens/${encodeURIComponent(id)}`, { method: 'DELETE' }),
    onSuccess: () => qc.invalidateQueries({ queryKey: tokenKeys.all }),
  });
}
