// Signing keys: public keys only (the console never receives a private key).
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, STALE } from './api';
import type { List } from '../schemas/common';
import type { RegisterKeyRequest, SigningKeyView } from '../schemas/keys';

// The shapes come from the shared schema module (one source of truth with the server).
export type { KeyState } from '../schemas/keys';
export type SigningKey = SigningKeyView;

export const keyKeys = { all: ['keys'] as const, list: () => ['keys', 'list'] as const };

export function useSigningKeys() {
  return useQuery({ queryKey: keyKeys.list(), queryFn: () => api<List<SigningKey>>('/api/keys'), staleTime: STALE.SECONDS.THIRTY });
}

function useKeyMutation<V>(fn: (v: V) => Promise<SigningKey>) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: fn,
    onSuccess: () => {
      qc.invalidateQueries({ queryKey: keyKeys.all });
      // A revoked key flags the releases it signed.
      qc.invalidateQueries({ queryKey: ['releases'] });
      // A key registered or revoked proposes every model's next trust set.
      qc.invalidateQueries({ queryKey: ['models', 'trust'] });
    },
  });
}

export function useRegisterKey() {
  return useKeyMutation((body: RegisterKeyRequest) => api<SigningKey>('/api/keys', { body }));
}

export function useRetireKey() {
  return useKeyMutation((id: string) => api<SigningKey>(`/api/keys/${encodeURIComponent(id)}/retire`, { method: 'POST', body: {} }));
}

export function useRevokeKey() {
  return useKeyMutation((id: string) => api<SigningKey>(`/api/keys/${encodeURIComponent(id)}/revoke`, { method: 'POST', body: {} }));
}
