// The team, for admins: people with their role and status, invitations, role changes, disabling.
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { api, STALE } from './api';
import { teamList, teamMemberSchema, type InvitationRequest, type TeamMember, type TeamMemberPatch } from '../schemas/team';
import { z } from 'zod';

export type { TeamMember };

export const teamKeys = { all: ['team'] as const, list: () => ['team', 'list'] as const };

const invitationAnswer = z.object({ member: teamMemberSchema, mailed: z.boolean() });
export type InvitationAnswer = z.infer<typeof invitationAnswer>;

export function useTeam() {
  // Always fresh when opened: invitations are accepted elsewhere, and people sign in all day.
  return useQuery({ queryKey: teamKeys.list(), queryFn: () => api('/api/team', {}, teamList), staleTime: 0, refetchInterval: STALE.SECONDS.THIRTY });
}

function useTeamMutation<V, T>(fn: (v: V) => Promise<T>) {
  const qc = useQueryClient();
  return useMutation({ mutationFn: fn, onSuccess: () => qc.invalidateQueries({ queryKey: teamKeys.all }) });
}

const at = (id: string) => `/api/team/${encodeURIComponent(id)}`;

export const useInvite = () => useTeamMutation((body: InvitationRequest) => api('/api/team/invitations', { body }, invitationAnswer));
export const useResendInvitation = () => useTeamMutation((id: string) => api(`${at(id)}/invitation`, { method: 'POST', body: {} }, invitationAnswer));
export const useRevokeInvitation = () => useTeamMutation((id: string) => api<void>(`${at(id)}/invitation`, { method: 'DELETE' }));
export const useChangeMember = () => useTeamMutation(({ id, patch }: { id: string; patch: TeamMemberPatch }) => api(at(id), { method: 'PATCH', body: patch }, teamMemberSchema));
export const useResetMemberSecondFactor = () => useTeamMutation((id: string) => api(`${at(id)}/second-factor`, { method: 'DELETE' }, teamMemberSchema));
