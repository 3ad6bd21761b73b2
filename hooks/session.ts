import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, ApiError, STALE } from './api';
import { meSchema, type Me, type SignInRequest, type SignInResponse } from '../schemas/auth';

export type { Me };

export const sessionKeys = { me: ['session', 'me'] as const };

/** The signed-in person, or null when nobody is signed in. */
export function useMe() {
  return useQuery({
    queryKey: sessionKeys.me,
    staleTime: STALE.MINUTES.FIVE,
    retry: (count, err) => !(err instanceof ApiError && err.status === 401) && count < 2,
    queryFn: async (): Promise<Me | null> => {
      try {
        return await api('/api/auth/me', {}, meSchema);
      } catch (err) {
        if (err instanceof ApiError && err.status === 401) return null;
        throw err;
      }
    },
  });
}

export function useSignIn() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: (body: SignInRequest) => api<SignInResponse>('/api/auth/sign-in', { body }),
    onSuccess: (answer) => {
      // With a second factor on, the password step signs in no one yet: the code step follows.
      if (answer.step !== 'signed_in') return;
      qc.clear();
      qc.setQueryData(sessionKeys.me, answer.user);
    },
  });
}

export function useSignOut() {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: () => api('/api/auth/sign-out', { method: 'POST' }),
    onSettled: () => {
      qc.clear();
      qc.setQueryData(sessionKeys.me, null);
    },
  });
}
