// API tokens for automation (CI pushing signed images). The token text is shown once, at creation.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, STALE } from './api';
import type { List } from '../schemas/common';
import type { CreateTokenRequest, CreatedToken, TokenScope, TokenView } from '../schemas/tokens';

// Shapes from schemas/tokens.ts (the server promises the answers); screens import them from here.
export { tokenScopes } from '../schemas/tokens';
export type { TokenScope };
export type ApiToken = TokenView;
export type NewToken = CreatedToken;

export const tokenKeys = { all: ['tokens'] as const, list: () => ['tokens', 'list'] as const };

export function useTokens() {
  return useQuery({ queryKey: tokenKeys.list(), queryFn: () => api<List<ApiToken>>('/api/tokens'), staleTime: STALE.SECONDS.THIRTY });
}

export function useCreateToken() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: CreateTokenRequest) => api<NewToken>('/api/tokens', { body }),
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
