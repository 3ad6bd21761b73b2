// Signing keys: public keys only (the console never receives a private key).
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, STALE } from './api';
import type { List } from '../schemas/common';
import type { SignatureAlgorithm } from '../schemas/manifest';

export type KeyState = 'active' | 'retired' | 'revoked';
export type SigningKey = {
  id: string;
  name: string;
  keyId: string;
  algorithm: SignatureAlgorithm;
  state: KeyState;
  publicKeyPem: string;
  createdAt: string;
  retiredAt: string | null;
  revokedAt: string | null;
  releaseCount: number;
};

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
    },
  });
}

export function useRegisterKey() {
  return useKeyMutation((body: { name: string; publicKeyPem: string }) => api<SigningKey>('/api/keys', { body }));
}

export function useRetireKey() {
  return useKeyMutation((id: string) => api<SigningKey>(`/api/keys/${encodeURIComponent(id)}/retire`, { method: 'POST', body: {} }));
}

export function useRevokeKey() {
  return useKeyMutation((id: string) => api<SigningKey>(`/api/keys/${encodeURIComponent(id)}/revoke`, { method: 'POST', body: {} }));
}
