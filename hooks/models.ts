// Models (hardware kinds) and their board revisions: list, detail, create, edit.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, STALE } from './api';
import type { List } from '../schemas/common';
import type { BoardRevision, LoggerModelView } from '../schemas/models';

// Shapes from schemas/models.ts (the server promises the answers); screens import them from here.
export type Board = BoardRevision;
export type Model = LoggerModelView;
/** What the model form sends (the server checks it against createModelRequest). */
export type ModelInput = Omit<Model, 'id' | 'loggerCount' | 'createdAt' | 'can' | 'signingThreshold'> & { signingThreshold?: number };

export const modelKeys = {
  all: ['models'] as const,
  list: () => [...modelKeys.all, 'list'] as const,
  detail: (id: string) => [...modelKeys.all, 'detail', id] as const,
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
      return qc.invalidateQueries({ queryKey: modelKeys.list() });
    },
  });
}
