import React from 'react';
import { TeamScreen, type MemberAction } from '../../components/team-screen';
import { useBreakpoints } from '../../components/breakpoints';
import { ApiError } from '../../hooks/api';
import { useMe } from '../../hooks/session';
import { useChangeMember, useInvite, useResendInvitation, useResetMemberSecondFactor, useRevokeInvitation, useTeam } from '../../hooks/team';
import { roleNames } from '../../schemas/auth';

const asApiError = (e: unknown) => (e instanceof ApiError ? e : null);

export default function Team() {
  const { wide } = useBreakpoints();
  const me = useMe();
  const team = useTeam();
  const invite = useInvite();
  const resend = useResendInvitation();
  const revoke = useRevokeInvitation();
  const change = useChangeMember();
  const secondFactorOff = useResetMemberSecondFactor();
  const [sent, setSent] = React.useState<{ email: string; mailed: boolean } | null>(null);
  const [pending, setPending] = React.useState<MemberAction | null>(null);
  const [notice, setNotice] = React.useState<string | null>(null);
  const mutations = { role: change, disable: change, enable: change, resend, revoke, second_factor_off: secondFactorOff };
  const active = pending ? mutations[pending.kind] : null;

  const done = (text: string) => () => {
    setPending(null);
    setNotice(text);
  };
  const run = (a: MemberAction) => {
    const m = a.member;
    if (a.kind === 'role') change.mutate({ id: m.id, patch: { role: a.role } }, { onSuccess: done(`${m.name} is now ${roleNames[a.role].toLowerCase()}`) });
    if (a.kind === 'disable') change.mutate({ id: m.id, patch: { disabled: true } }, { onSuccess: done(`${m.name} is disabled and signed out`) });
    if (a.kind === 'enable') change.mutate({ id: m.id, patch: { disabled: false } }, { onSuccess: done(`${m.name} can sign in again`) });
    if (a.kind === 'resend') resend.mutate(m.id, { onSuccess: (r) => done(r.mailed ? `A new invitation link went to ${m.email}` : `A new link was made for ${m.email}, but the e-mail was not sent`)() });
    if (a.kind === 'revoke') revoke.mutate(m.id, { onSuccess: done(`The invitation to ${m.email} is revoked`) });
    if (a.kind === 'second_factor_off') secondFactorOff.mutate(m.id, { onSuccess: done(`${m.name}'s second factor is off; they were signed out`) });
  };

  return (
    <TeamScreen
      state={team}
      meId={me.data?.id ?? ''}
      wide={wide}
      invite={{
        run: (email, role, cleared) =>
          invite.mutate(
            { email, role },
            {
              onSuccess: (r) => {
                setSent({ email: r.member.email, mailed: r.mailed });
                cleared();
              },
            },
          ),
        busy: invite.isPending,
        error: asApiError(invite.error),
        sent,
      }}
      act={{
        run,
        busy: active?.isPending ?? false,
        error: asApiError(active?.error),
        pending,
        ask: (a) => {
          Object.values(mutations).forEach((m) => m.reset());
          setNotice(null);
          setPending(a);
        },
        notice,
      }}
    />
  );
}
