// One's own account (name, password, second factor), password resets and invitations to join.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api } from './api';
import { sessionKeys, useStartSession } from './session';
import {
  meSchema,
  recoveryCodesAnswer,
  secondFactorSetup,
  type AccountUpdateRequest,
  type Me,
  type PasswordChangeRequest,
  type PasswordResetConfirmRequest,
  type RecoveryCodesAnswer,
  type SecondFactorConfirmRequest,
  type SecondFactorOffRequest,
  type SecondFactorSetup,
} from '../schemas/auth';
import { invitationAccepted, invitationView, type InvitationAcceptRequest, type InvitationView } from '../schemas/team';

export type { InvitationView, SecondFactorSetup, RecoveryCodesAnswer };

function useSetMe() {
  const qc = useQueryClient();
  return (me: Me) => qc.setQueryData(sessionKeys.me, me);
}

export function useRename() {
  const setMe = useSetMe();
  return useMutation({ mutationFn: (body: AccountUpdateRequest) => api('/api/auth/me', { method: 'PATCH', body }, meSchema), onSuccess: setMe });
}

export function useChangePassword() {
  const setMe = useSetMe();
  return useMutation({ mutationFn: (body: PasswordChangeRequest) => api('/api/auth/password', { body }, meSchema), onSuccess: setMe });
}

export function useRequestPasswordReset() {
  return useMutation({ mutationFn: (email: string) => api<{ detail: string }>('/api/auth/password-reset', { body: { email } }) });
}

export function useConfirmPasswordReset() {
  return useMutation({ mutationFn: (body: PasswordResetConfirmRequest) => api<{ detail: string }>('/api/auth/password-reset/confirm', { body }) });
}

/** A new secret for an authenticator app; kept by the screen only while it is set up. */
export function useStartSecondFactor() {
  return useMutation({ mutationFn: () => api('/api/auth/second-factor/setup', { method: 'POST' }, secondFactorSetup) });
}

export function useConfirmSecondFactor() {
  const setMe = useSetMe();
  return useMutation({
    mutationFn: (body: SecondFactorConfirmRequest) => api('/api/auth/second-factor/confirm', { body }, recoveryCodesAnswer),
    onSuccess: (answer) => setMe(answer.user),
  });
}

export function useTurnOffSecondFactor() {
  const setMe = useSetMe();
  return useMutation({ mutationFn: (body: SecondFactorOffRequest) => api('/api/auth/second-factor', { method: 'DELETE', body }, meSchema), onSuccess: setMe });
}

/** What an invitation link offers (who invited whom, as what), before the invitee joins. */
export function useInvitation(token: string | null) {
  return useQuery({
    queryKey: ['invitation', token],
    enabled: Boolean(token),
    retry: false,
    staleTime: Infinity,
    queryFn: () => api('/api/invitations/lookup', { body: { token } }, invitationView),
  });
}

export function useAcceptInvitation() {
  const start = useStartSession();
  return useMutation({
    mutationFn: (body: InvitationAcceptRequest) => api('/api/invitations/accept', { body }, invitationAccepted),
    onSuccess: (answer) => start(answer.user),
  });
}
