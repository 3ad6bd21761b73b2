import React from 'react';
import { useRouter } from 'expo-router';
import { InvitationScreen } from '../../components/invitation-screen';
import { useLinkToken } from '../../components/link-token';
import { useAcceptInvitation, useInvitation } from '../../hooks/account';
import { ApiError } from '../../hooks/api';

export default function Invitation() {
  const token = useLinkToken();
  const invitation = useInvitation(token);
  const accept = useAcceptInvitation();
  const router = useRouter();
  return (
    <InvitationScreen
      hasToken={Boolean(token)}
      invitation={invitation}
      busy={accept.isPending}
      error={accept.error instanceof ApiError ? accept.error : null}
      onJoin={(name, password) => token && accept.mutate({ token, name, password }, { onSuccess: () => router.replace('/') })}
    />
  );
}
