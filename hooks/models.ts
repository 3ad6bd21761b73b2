// Models (hardware kinds) and their board revisions: list, detail, create, edit.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, STALE } from './api';
import type { List } from '../schemas/common';
import type { BoardRevision, LoggerModelView } from '../schemas/models';
import type { TrustSetView, TrustSignatureRequest } from '../schemas/keys';

// Shapes from schemas/models.ts (the server promises the answers); screens import them from here.
export type Board = BoardRevision;
export type Model = LoggerModelView;
/** What the model form sends (the server checks it against createModelRequest). */
export type ModelInput = Omit<Model, 'id' | 'loggerCount' | 'createdAt' | 'can' | 'signingThreshold'> & { signingThreshold?: number };

export const modelKeys = {
  all: ['models'] as const,
  list: () => [...modelKeys.all, 'list'] as const,
  detail: (id: string) => [...modelKeys.all, 'detail', id] as const,
  /** Every model's trust sets (a key registered or revoked proposes a set for each model). */
  trustAll: () => [...modelKeys.all, 'trust'] as const,
  trust: (id: string) => [...modelKeys.all, 'trust', id] as const,
};

export function useModels() {
  return useQuery({ queryKey: modelKeys.list(), staleTime: STALE.MINUTES.FIVE, queryFn: () => api<List<Model>>('/api/models') });
}

export function useModel(id: string | undefined) {
  return useQuery({
    queryKey: modelKeys.detail(id ?? ''),
    enabled: Boolean(id),
    queryFn: () => api<Model>(`/api/models/${id}`),
  });
}

export function useCreateModel() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: ModelInput) => api<Model>('/api/models', { body }),
    onSuccess: () => qc.invalidateQueries({ queryKey: modelKeys.all }),
  });
}

/** Edits whichever model the variables name (the models screen edits one at a time). */
export function useUpdateModel() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: ({ id, body }: { id: string; body: Partial<ModelInput> }) => api<Model>(`/api/models/${id}`, { method: 'PATCH', body }),
    onSuccess: (model, { id }) => {
      qc.setQueryData(modelKeys.detail(id), model);
      // A changed signing rule proposes the model's next trust set.
      return Promise.all([qc.invalidateQueries({ queryKey: modelKeys.list() }), qc.invalidateQueries({ queryKey: modelKeys.trust(id) })]);
    },
  });
}

/** The trust set a model's loggers follow and the one waiting for signatures (signers only: admins and release engineers). */
export function useTrustSets(id: string | undefined, enabled = true) {
  return useQuery({
    queryKey: modelKeys.trust(id ?? ''),
    enabled: Boolean(id) && enabled,
    queryFn: () => api<TrustSetView>(`/api/models/${id}/trust`),
  });
}

/** Adds one signature (the output of `heliodor trust sign`) to the model's pending trust set. */
export function useSignTrustSet(id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: TrustSignatureRequest) => api<TrustSetView>(`/api/models/${id}/trust/signatures`, { body }),
    onSuccess: (view) => qc.setQueryData(modelKeys.trust(id), view),
  });
}
