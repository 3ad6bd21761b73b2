import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, ApiError, STALE } from './api';
import { meSchema, signInResponse, type Me, type SecondFactorSignInRequest, type SignInRequest, type SignInResponse } from '../schemas/auth';

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

/** After signing in (or joining), the cache starts over with the new person. */
export function useStartSession() {
  const qc = useQueryClient();
  return (user: Me) => {
    qc.clear();
    qc.setQueryData(sessionKeys.me, user);
  };
}

export function useSignIn() {
  const start = useStartSession();
  return useMutation({
    mutationFn: (body: SignInRequest) => api<SignInResponse>('/api/auth/sign-in', { body }, signInResponse),
    onSuccess: (answer) => {
      // With a second factor on, the password step signs in no one yet: the code step follows.
      if (answer.step === 'signed_in') start(answer.user);
    },
  });
}

/** The code step of signing in: a code from the authenticator app, or a recovery code. */
export function useSecondFactorSignIn() {
  const start = useStartSession();
  return useMutation({
    mutationFn: (body: SecondFactorSignInRequest) => api<SignInResponse>('/api/auth/sign-in/second-factor', { body }, signInResponse),
    onSuccess: (answer) => {
      if (answer.step === 'signed_in') start(answer.user);
    },
  });
}

function useEndSession(path: string) {
  const qc = useQueryClient();
  return useMutation({
    mutationFn: () => api(path, { method: 'POST' }),
    onSettled: () => {
      qc.clear();
      qc.setQueryData(sessionKeys.me, null);
    },
  });
}

export const useSignOut = () => useEndSession('/api/auth/sign-out');
export const useSignOutEverywhere = () => useEndSession('/api/auth/sign-out-everywhere');
