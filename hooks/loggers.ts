// Loggers: the registry list and detail, registration (one or a CSV batch), token rotation, retirement,
// moves, profile changes, install photos, and on-site enrollment.
import { keepPreviousData, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, query, STALE, upload } from './api';
import type { List } from '../schemas/common';
import type { z } from 'zod';
import type {
  BatchLabelsIssued,
  BatchRegistered,
  CommissioningView,
  Enrolled,
  EnrollmentLookup,
  enrollRequest,
  IssuedLogger,
  LoggerDetail,
  LoggerRow,
  LoggerStatus,
  profileChangeRequest,
  ProfileView,
  registerLoggerRequest,
  RotatedToken,
} from '../schemas/loggers';
import { siteKeys } from './sites';
import { modelKeys } from './models';

// Response shapes are shared with the server (schemas/loggers.ts).
export type { LoggerStatus, LoggerRow, LoggerDetail } from '../schemas/loggers';
export type Profile = ProfileView;
export type Registered = IssuedLogger;
export type BatchResult = BatchRegistered;
export type BatchLabels = BatchLabelsIssued;
export type Rotated = RotatedToken;
export type Lookup = EnrollmentLookup;
export type Commissioning = CommissioningView;

export type LoggerFilter = { q?: string; siteId?: string; modelId?: string; status?: LoggerStatus; page?: number; pageSize?: 25 | 50 | 100 };

export const loggerKeys = {
  all: ['loggers'] as const,
  lists: () => [...loggerKeys.all, 'list'] as const,
  list: (filter: LoggerFilter) => [...loggerKeys.lists(), filter] as const,
  detail: (id: string) => [...loggerKeys.all, 'detail', id] as const,
  commissioning: (id: string) => [...loggerKeys.detail(id), 'commissioning'] as const,
};

export function useLoggers(filter: LoggerFilter) {
  return useQuery({
    queryKey: loggerKeys.list(filter),
    staleTime: STALE.SECONDS.THIRTY,
    placeholderData: keepPreviousData,
    queryFn: () => api<List<LoggerRow>>(`/api/loggers${query(filter)}`),
  });
}

export function useLogger(id: string | undefined) {
  return useQuery({
    queryKey: loggerKeys.detail(id ?? ''),
    enabled: Boolean(id),
    staleTime: STALE.SECONDS.THIRTY,
    queryFn: () => api<LoggerDetail>(`/api/loggers/${id}`),
  });
}

/** After any registry change: lists, counts on sites and models, and the overview figures. */
function useInvalidateRegistry() {
  const qc = useQueryClient();
  return (loggerId?: string) =>
    Promise.all([
      qc.invalidateQueries({ queryKey: loggerKeys.lists() }),
      loggerId ? qc.invalidateQueries({ queryKey: loggerKeys.detail(loggerId) }) : null,
      qc.invalidateQueries({ queryKey: siteKeys.all }),
      qc.invalidateQueries({ queryKey: modelKeys.all }),
      qc.invalidateQueries({ queryKey: ['overview'] }),
    ]);
}

export type RegisterInput = z.input<typeof registerLoggerRequest>;

export function useRegisterLogger() {
  const invalidate = useInvalidateRegistry();
  return useMutation({
    mutationFn: (body: RegisterInput) => api<Registered>('/api/loggers', { body }),
    onSuccess: () => invalidate(),
  });
}

/** CSV batch upload; `onProgress` receives the fraction of the file sent (0…1). */
export function useRegisterBatch(onProgress: (fraction: number) => void) {
  const invalidate = useInvalidateRegistry();
  return useMutation({
    mutationFn: (file: Blob & { name?: string }) => {
      const form = new FormData();
      form.append('file', file, file.name ?? 'loggers.csv');
      return upload<BatchResult>('/api/loggers/batch', form, onProgress);
    },
    onSuccess: () => invalidate(),
  });
}

export function useRotateToken(id: string) {
  const invalidate = useInvalidateRegistry();
  return useMutation({
    mutationFn: () => api<Rotated>(`/api/loggers/${id}/token`, { method: 'POST' }),
    onSuccess: () => invalidate(id),
  });
}

/** New labels for every logger of a batch still waiting for enrollment; the answer is shown once. */
export function useIssueBatchLabels() {
  const qc = useQueryClient();
  const invalidate = useInvalidateRegistry();
  return useMutation({
    mutationFn: (batchId: string) => api<BatchLabels>(`/api/batches/${batchId}/labels`, { method: 'POST' }),
    onSuccess: () => Promise.all([invalidate(), qc.invalidateQueries({ queryKey: loggerKeys.all })]),
  });
}

export function useRetireLogger(id: string) {
  const qc = useQueryClient();
  const invalidate = useInvalidateRegistry();
  return useMutation({
    mutationFn: (body: { reason?: string }) => api<LoggerDetail>(`/api/loggers/${id}/retire`, { body }),
    onSuccess: (logger) => {
      qc.setQueryData(loggerKeys.detail(id), logger);
      return invalidate();
    },
  });
}

export function useMoveLogger(id: string) {
  const qc = useQueryClient();
  const invalidate = useInvalidateRegistry();
  return useMutation({
    mutationFn: (body: { siteId: string }) => api<LoggerDetail>(`/api/loggers/${id}/move`, { body }),
    onSuccess: (logger) => {
      qc.setQueryData(loggerKeys.detail(id), logger);
      return invalidate();
    },
  });
}

/**
 * The first-readings check kept with the logger. While it waits for readings it asks again every 30 s, so the
 * installer on the roof sees the verdict arrive.
 */
export function useCommissioning(id: string | undefined) {
  return useQuery({
    queryKey: loggerKeys.commissioning(id ?? ''),
    enabled: Boolean(id),
    staleTime: STALE.SECONDS.THIRTY,
    refetchInterval: (q) => (q.state.data?.state === 'waiting' && !q.state.data.problem ? STALE.SECONDS.THIRTY : false),
    queryFn: () => api<Commissioning>(`/api/loggers/${id}/commissioning`),
  });
}

/** Starts the check again after the wiring was fixed. */
export function useRestartCommissioning(id: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: () => api<Commissioning>(`/api/loggers/${id}/commissioning/restart`, { method: 'POST' }),
    onSuccess: (view) => qc.setQueryData(loggerKeys.commissioning(id), view),
  });
}

export type ProfileInput = z.input<typeof profileChangeRequest>;

export function useUpdateProfile(id: string) {
  const invalidate = useInvalidateRegistry();
  return useMutation({
    mutationFn: (body: ProfileInput) => api<Profile>(`/api/loggers/${id}/profile`, { method: 'PATCH', body }),
    onSuccess: () => invalidate(id),
  });
}

export function useUploadPhoto(onProgress?: (fraction: number) => void) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: ({ loggerId, file }: { loggerId: string; file: Blob & { name?: string } }) => {
      const form = new FormData();
      form.append('photo', file, file.name ?? 'install.jpg');
      return upload<void>(`/api/loggers/${loggerId}/photo`, form, onProgress);
    },
    onSuccess: (_void, { loggerId }) => qc.invalidateQueries({ queryKey: loggerKeys.detail(loggerId) }),
  });
}

export const photoUrl = (loggerId: string) => `${process.env.EXPO_PUBLIC_API_URL ?? ''}/api/loggers/${loggerId}/photo`;

// ─── Enrollment ──────────────────────────────────────────────────────────────

export function useEnrollmentLookup() {
  // Tried even while the browser says it is offline, so the screen says so instead of waiting.
  return useMutation({ networkMode: 'always', mutationFn: (token: string) => api<Lookup>('/api/enrollments/lookup', { body: { token } }) });
}

export type EnrollInput = z.input<typeof enrollRequest>;

export function useEnroll() {
  const qc = useQueryClient();
  const invalidate = useInvalidateRegistry();
  return useMutation({
    // Tried even while the browser says it is offline: a failure to connect puts it in the phone's queue.
    networkMode: 'always',
    mutationFn: (body: EnrollInput) => api<Enrolled>('/api/enrollments', { body }),
    onSuccess: ({ logger }) => {
      qc.setQueryData(loggerKeys.detail(logger.id), logger);
      return invalidate();
    },
  });
}
