import React from 'react';
import { useRouter } from 'expo-router';
import { MoreScreen } from '../../components/more-screen';
import { destinationsFor } from '../../components/navigation';
import { useMe, useSignOut } from '../../hooks/session';

export default function More() {
  const me = useMe();
  const signOut = useSignOut();
  const router = useRouter();
  if (!me.data) return null;
  return (
    <MoreScreen
      me={me.data}
      destinations={destinationsFor(me.data.role).filter((d) => !d.tab)}
      onSignOut={() => signOut.mutate(undefined, { onSettled: () => router.replace('/sign-in') })}
    />
  );
}
